// Probe for the Python reference checks. stdin: a first line "p", then one observation per line,
// "y x_1 ... x_p". stdout: one line per observation after it is absorbed,
// "identifiable rr_valid recursive_residual theta_1 ... theta_p", all with 17 significant digits.
#include <cstdio>
#include <vector>

#include "estimators/ls/rls.h"

int main() {
  using namespace bayline::est;
  int p = 0;
  if (std::scanf("%d", &p) != 1 || p < 1) return 2;
  Rls est(RlsOptions{}, p);
  std::vector<double> x(static_cast<std::size_t>(p));
  double y = 0;
  while (std::scanf("%lf", &y) == 1) {
    for (auto& v : x) {
      if (std::scanf("%lf", &v) != 1) return 3;
    }
    Sample s;
    s.y = y;
    s.x = x;
    RecursiveResidual rr;
    const Status st = est.Update(s, nullptr, &rr);
    if (!st.ok()) {
      std::fprintf(stderr, "%s\n", st.ToString().c_str());
      return 4;
    }
    std::printf("%d %d %.17g", est.identifiable() ? 1 : 0, rr.valid ? 1 : 0, rr.value);
    const Eigen::VectorXd th = est.coefficients();
    for (int j = 0; j < p; ++j) std::printf(" %.17g", th(j));
    std::printf("\n");
  }
  return 0;
}
