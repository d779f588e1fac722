#include "estimators/ml/exponential_ml.h"

#include <cmath>
#include <string>

#include "estimators/ml/scalar_ml_impl.h"

namespace bayline::est {

Status ExponentialFamily::Stats::Check(const State& s) {
  const auto bad = [](const char* why) { return Status::Error(ErrorCode::kInvalidState, why); };
  if (!std::isfinite(s.mean)) return bad("exponential state has a non-finite value");
  if (s.mean < 0) return bad("exponential state has a negative value");
  if ((s.mean > 0) != (s.count > 0)) return bad("exponential state: sums and count disagree");
  return Status::Ok();
}

double ExponentialFamily::Rate(const State& st) { return st.mean > 0 ? 1.0 / st.mean : kNaN; }

double ExponentialFamily::LogLikelihood(const State& st) {
  const double r = Rate(st);
  return std::isnan(r) ? kNaN : st.weight_sum * (std::log(r) - 1.0);
}

Status ExponentialFamily::CheckSample(const Sample& s) {
  return ml_internal::CheckPositiveY("exponential", s.y);
}

void ExponentialFamily::Predictive(const State& st, const Sample& s, Innovation* out) {
  const double r = Rate(st);
  if (r > 0) ml_internal::FillInnovation(s.y, st.mean, st.mean, std::log(r) - r * s.y, out);
}

void ExponentialFamily::Step(const State& st, double, const Sample& s, State* next) {
  next->mean = st.mean + (s.weight / next->weight_sum) * (s.y - st.mean);
}

bool ExponentialFamily::Estimate(const State& st, std::span<double, 1> value,
                                 std::span<double, 1> se) {
  const double r = Rate(st);
  value[0] = r;
  se[0] = r / std::sqrt(st.weight_sum);
  return r > 0 && st.weight_sum > 0;
}

template struct ScalarMlState<ExponentialFamily::Stats>;
template class ScalarMl<ExponentialFamily>;

}  // namespace bayline::est
