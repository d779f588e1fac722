#include "estimators/ml/gaussian_ml.h"

#include <cmath>
#include <numbers>
#include <string>

#include "estimators/core/distributions.h"
#include "estimators/ml/scalar_ml_impl.h"

namespace bayline::est {

Status GaussianFamily::Stats::Check(const State& s) {
  const auto bad = [](const char* why) { return Status::Error(ErrorCode::kInvalidState, why); };
  if (!std::isfinite(s.weight_sq_sum) || !std::isfinite(s.shift) ||
      !std::isfinite(s.mean_shifted) || !std::isfinite(s.m2)) {
    return bad("gaussian state has a non-finite value");
  }
  if (s.weight_sq_sum < 0 || s.m2 < 0) return bad("gaussian state has a negative sum");
  if (s.weight_sq_sum > s.weight_sum * s.weight_sum * (1.0 + 1e-12)) {
    return bad("gaussian state: W2 exceeds W^2");
  }
  if (s.count == 0 && (s.shift != 0 || s.mean_shifted != 0 || s.m2 != 0)) {
    return bad("gaussian state: moments without data");
  }
  return Status::Ok();
}

double GaussianFamily::VarianceMl(const State& st) {
  return st.weight_sum > 0 ? st.m2 / st.weight_sum : kNaN;
}

double GaussianFamily::LogLikelihood(const State& st) {
  const double v = VarianceMl(st);
  if (!(v > 0)) return kNaN;
  return -0.5 * st.weight_sum * (std::log(2.0 * std::numbers::pi * v) + 1.0);
}

void GaussianFamily::Predictive(const State& st, const Sample& s, Innovation* out) {
  const double v = VarianceMl(st);
  if (!(v > 0)) return;
  const double sd = std::sqrt(v);
  const double m = Mean(st);
  ml_internal::FillInnovation(s.y, m, sd, dist::NormalLogPdf(s.y, m, sd), out);
}

void GaussianFamily::Step(const State& st, double f, const Sample& s, State* next) {
  next->weight_sq_sum = f * f * st.weight_sq_sum + s.weight * s.weight;
  if (st.count == 0) next->shift = s.y;
  const double u = s.y - next->shift;
  const double d = u - st.mean_shifted;
  next->mean_shifted = st.mean_shifted + (s.weight / next->weight_sum) * d;
  next->m2 = f * st.m2 + s.weight * d * (u - next->mean_shifted);
  if (next->m2 < 0) next->m2 = 0;  // rounding only: d and (y - mean') have the same sign
}

bool GaussianFamily::Estimate(const State& st, std::span<double, 2> value,
                              std::span<double, 2> se) {
  const double v = VarianceMl(st);
  const double w = st.weight_sum;
  value[0] = Mean(st);
  value[1] = v;
  se[0] = std::sqrt(v / w);
  se[1] = v * std::sqrt(2.0 / w);
  return v > 0;
}

double GaussianMl::variance_unbiased() const {
  const State& st = state();
  if (!(st.weight_sum > 0)) return kNaN;
  const double denom = st.weight_sum - st.weight_sq_sum / st.weight_sum;
  return denom > 0 ? st.m2 / denom : kNaN;
}

double GaussianMl::effective_sample_size() const {
  const State& st = state();
  return st.weight_sq_sum > 0 ? st.weight_sum * st.weight_sum / st.weight_sq_sum : 0.0;
}

template struct ScalarMlState<GaussianFamily::Stats>;
template class ScalarMl<GaussianFamily>;

}  // namespace bayline::est
