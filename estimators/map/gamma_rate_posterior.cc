#include "estimators/map/gamma_rate_posterior.h"

#include <cmath>
#include <string>

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

GammaRatePrior DiscountedGammaRate(const GammaRateState& s, const ForgettingOptions& discount,
                                   double a0, double b0, double time) {
  GammaRatePrior p{s.a, s.b, ForgettingFactor(discount, time, s.last_time)};
  if (p.delta < 1.0) {
    p.a = p.delta * p.a + (1.0 - p.delta) * a0;
    p.b = p.delta * p.b + (1.0 - p.delta) * b0;
  }
  return p;
}

Status AdvanceGammaRate(const GammaRatePrior& prior, double da, double db, const Sample& s,
                        const Innovation& inn, const char* model, GammaRateState* state,
                        Innovation* out) {
  const double a_new = prior.a + s.weight * da, b_new = prior.b + s.weight * db;
  if (!std::isfinite(inn.log_predictive) || !std::isfinite(inn.standardized) ||
      !std::isfinite(a_new) || !std::isfinite(b_new)) {
    return map_internal::Numerical(std::string(model) + " update not finite");
  }
  GammaRateState next = *state;
  next.a = a_new, next.b = b_new;
  next.effective_n = prior.delta * state->effective_n + s.weight;
  next.log_marginal += inn.log_predictive;
  next.count += 1;
  next.last_time = map_internal::LatestTime(state->last_time, s.time);
  if (Status v = ValidateGammaRateState(next); !v.ok()) return map_internal::InvalidNext(v);
  *state = next;
  if (out) *out = inn;
  return Status::Ok();
}

}  // namespace bayline::est
