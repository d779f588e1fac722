#include "estimators/map/gamma_rate_posterior.h"

#include <cmath>

#include "estimators/core/distributions.h"
#include "estimators/map/posterior_util.h"

namespace bayline::est {

void GammaRateState::Pack(StateWriter& w) const {
  for (double v : {a, b, effective_n, log_marginal, count, last_time}) w.Put(v);
}

Status GammaRateState::Unpack(StateReader& r) {
  for (double* v : {&a, &b, &effective_n, &log_marginal, &count, &last_time}) r.Get(*v);
  return r.status();
}

ParameterReport GammaRateReport(const GammaRateState& s, double level) {
  ParameterReport r;
  const bool ok = map_internal::LevelOk(level);
  r.value = {s.a >= 1 ? (s.a - 1) / s.b : 0.0};
  r.posterior_mean = {s.a / s.b};
  r.std_error = {std::sqrt(s.a) / s.b};
  r.lower = {ok ? dist::GammaQuantile(0.5 - 0.5 * level, s.a, s.b) : kNaN};
  r.upper = {ok ? dist::GammaQuantile(0.5 + 0.5 * level, s.a, s.b) : kNaN};
  r.level = level;
  r.identifiable = true;
  r.effective_n = s.effective_n;
  r.log_likelihood = s.log_marginal;
  return r;
}

Status ValidateGammaRateState(const GammaRateState& s) {
  if (!(s.a > 0) || !std::isfinite(s.a) || !(s.b > 0) || !std::isfinite(s.b)) {
    return map_internal::BadState("gamma parameters must be > 0 and finite");
  }
  return map_internal::CheckBookkeeping(s.effective_n, s.log_marginal, s.count, s.last_time);
}

}  // namespace bayline::est
