#include "estimators/ml/lognormal_ml.h"

#include <cmath>
#include <string>

#include "estimators/core/distributions.h"

namespace bayline::est {

double LognormalMl::sdlog() const { return std::sqrt(log_.variance_ml()); }

double LognormalMl::log_likelihood() const {
  return log_.log_likelihood() - log_.state().weight_sum * log_.mean();
}

Status LognormalMl::Update(const Sample& s, Innovation* out) {
  Status st = CheckCommonFields(s, 0);
  if (!st.ok()) return st;
  if (!(s.y > 0)) {
    return Status::Error(ErrorCode::kOutOfDomain, "lognormal y must be > 0, got " + std::to_string(s.y));
  }
  Innovation inn;
  const double v = log_.variance_ml();
  if (v > 0) {
    const double m = log_.mean();
    const double sd = std::sqrt(v);
    const double ey = std::exp(m + 0.5 * v);
    const double sdy = ey * std::sqrt(std::expm1(v));
    const double lu = std::log(s.y);
    ml_internal::FillInnovation(s.y, ey, sdy, dist::NormalLogPdf(lu, m, sd) - lu, &inn);
  }
  Sample logged = s;
  logged.y = std::log(s.y);
  st = log_.Update(logged, nullptr);
  if (!st.ok()) return st;
  if (out) *out = inn;
  return Status::Ok();
}

ParameterReport LognormalMl::Report(double level) const {
  ParameterReport r;
  const double v = log_.variance_ml();
  const bool ok = v > 0;
  const double w = log_.state().weight_sum;
  const double sd = std::sqrt(v);
  const double value[2] = {log_.mean(), sd};
  const double se[2] = {sd / std::sqrt(w), sd / std::sqrt(2.0 * w)};
  ml_internal::FillWaldReport(value, se, ok, level, &r);
  r.effective_n = w;
  r.log_likelihood = log_likelihood();
  return r;
}

}  // namespace bayline::est
