// Explicit instantiations of RecursiveLeastSquares<P> (the definitions live in the two private
// headers so this is the only translation unit that compiles them).
#include "estimators/ls/recursive_least_squares.h"

#include "estimators/ls/rls_report_impl.h"
#include "estimators/ls/rls_update_impl.h"

namespace bayline::est {

template class RecursiveLeastSquares<1>;
template class RecursiveLeastSquares<2>;
template class RecursiveLeastSquares<3>;
template class RecursiveLeastSquares<4>;
template class RecursiveLeastSquares<8>;
template class RecursiveLeastSquares<Eigen::Dynamic>;

}  // namespace bayline::est
