#include "estimators/ml/lognormal_ml.h"

#include <cmath>
#include <string>

#include "estimators/core/distributions.h"
#include "estimators/ml/scalar_ml_impl.h"

namespace bayline::est {

double LognormalFamily::LogLikelihood(const State& st) {
  return GaussianFamily::LogLikelihood(st) - st.weight_sum * GaussianFamily::Mean(st);
}

Status LognormalFamily::CheckSample(const Sample& s) {
  return ml_internal::CheckPositiveY("lognormal", s.y);
}

void LognormalFamily::Predictive(const State& st, const Sample& s, Innovation* out) {
  const double v = GaussianFamily::VarianceMl(st);
  if (!(v > 0)) return;
  const double m = GaussianFamily::Mean(st);
  const double sd = std::sqrt(v);
  const double ey = std::exp(m + 0.5 * v);
  const double sdy = ey * std::sqrt(std::expm1(v));
  const double lu = std::log(s.y);
  ml_internal::FillInnovation(s.y, ey, sdy, dist::NormalLogPdf(lu, m, sd) - lu, out);
}

void LognormalFamily::Step(const State& st, double f, const Sample& s, State* next) {
  Sample logged = s;
  logged.y = std::log(s.y);
  GaussianFamily::Step(st, f, logged, next);
}

bool LognormalFamily::Estimate(const State& st, std::span<double, 2> value,
                               std::span<double, 2> se) {
  const double v = GaussianFamily::VarianceMl(st);
  const double w = st.weight_sum;
  const double sd = std::sqrt(v);
  value[0] = GaussianFamily::Mean(st);
  value[1] = sd;
  se[0] = sd / std::sqrt(w);
  se[1] = sd / std::sqrt(2.0 * w);
  return v > 0;
}

template class ScalarMl<LognormalFamily>;

}  // namespace bayline::est
