#include "estimators/map/beta_binomial.h"

#include <cassert>
#include <cmath>

#include "estimators/core/distributions.h"
#include "estimators/core/special_functions.h"
#include "estimators/map/posterior_util.h"

namespace bayline::est {

Status BetaBinomial::Options::Validate() const {
  if (!(alpha0 > 0) || !std::isfinite(alpha0)) {
    return map_internal::Config("alpha0 must be > 0 and finite");
  }
  if (!(beta0 > 0) || !std::isfinite(beta0)) {
    return map_internal::Config("beta0 must be > 0 and finite");
  }
  return discount.Validate();
}

BetaBinomial::BetaBinomial(const Options& options) : options_(options) {
  assert(options.Validate().ok());
  state_.alpha = options_.alpha0;
  state_.beta = options_.beta0;
}

Status BetaBinomial::Update(const Sample& s, Innovation* out) {
  if (Status st = CheckCommonFields(s, 0); !st.ok()) return st;
  if (!map_internal::IsCount(s.trials) || s.trials < 1) {
    return map_internal::Domain("trials must be an integer >= 1, got " + std::to_string(s.trials));
  }
  if (!map_internal::IsCount(s.y) || s.y < 0) {
    return map_internal::Domain("successes must be a non-negative integer, got " +
                                std::to_string(s.y));
  }
  const double n = std::round(s.trials), y = std::round(s.y);
  if (y > n) {
    return map_internal::Domain("successes " + std::to_string(y) + " exceed trials " +
                                std::to_string(n));
  }
  const double delta = ForgettingFactor(options_.discount, s.time, state_.last_time);
  double al = state_.alpha, be = state_.beta;
  if (delta < 1.0) {
    al = delta * al + (1.0 - delta) * options_.alpha0;
    be = delta * be + (1.0 - delta) * options_.beta0;
  }
  const double ab = al + be;
  const double mean = n * al / ab;
  const double var = n * al * be * (ab + n) / (ab * ab * (ab + 1.0));
  const double log_choose =
      special::LogGamma(n + 1) - special::LogGamma(y + 1) - special::LogGamma(n - y + 1);
  const double log_p = log_choose + special::LogBeta(y + al, n - y + be) - special::LogBeta(al, be);
  Innovation inn;
  inn.valid = true;
  inn.prediction = mean;
  inn.residual = y - mean;
  inn.predictive_sd = std::sqrt(var);
  inn.standardized = var > 0 ? inn.residual / inn.predictive_sd : 0.0;
  inn.log_predictive = s.weight * log_p;

  const double al_new = al + s.weight * y, be_new = be + s.weight * (n - y);
  if (!std::isfinite(inn.log_predictive) || !std::isfinite(al_new) || !std::isfinite(be_new)) {
    return map_internal::Numerical("beta-binomial update not finite");
  }
  State next = state_;
  next.alpha = al_new, next.beta = be_new;
  next.effective_n = delta * state_.effective_n + s.weight;
  next.log_marginal += inn.log_predictive;
  next.count += 1;
  next.last_time = map_internal::LatestTime(state_.last_time, s.time);
  if (Status v = Validate(next); !v.ok()) return map_internal::InvalidNext(v);
  state_ = next;
  if (out) *out = inn;
  return Status::Ok();
}

ParameterReport BetaBinomial::Report(double level) const {
  ParameterReport r;
  const double al = state_.alpha, be = state_.beta, ab = al + be;
  double mode;
  if (al > 1 && be > 1) {
    mode = (al - 1) / (ab - 2);
  } else if (al <= 1 && be > 1) {
    mode = 0;
  } else if (al > 1 && be <= 1) {
    mode = 1;
  } else {
    mode = al < be ? 0 : (al > be ? 1 : 0.5);
  }
  const bool ok = map_internal::LevelOk(level);
  r.value = {mode};
  r.posterior_mean = {al / ab};
  r.std_error = {std::sqrt(al * be / (ab * ab * (ab + 1)))};
  r.lower = {ok ? dist::BetaQuantile(0.5 - 0.5 * level, al, be) : kNaN};
  r.upper = {ok ? dist::BetaQuantile(0.5 + 0.5 * level, al, be) : kNaN};
  r.level = level;
  r.identifiable = true;
  r.effective_n = state_.effective_n;
  r.log_likelihood = state_.log_marginal;
  return r;
}

void BetaBinomial::State::Pack(StateWriter& w) const {
  for (double v : {alpha, beta, effective_n, log_marginal, count, last_time}) w.Put(v);
}

Status BetaBinomial::State::Unpack(StateReader& r) {
  for (double* v : {&alpha, &beta, &effective_n, &log_marginal, &count, &last_time}) r.Get(*v);
  return r.status();
}

Status BetaBinomial::Validate(const State& s) {
  if (!(s.alpha > 0) || !std::isfinite(s.alpha) || !(s.beta > 0) || !std::isfinite(s.beta)) {
    return map_internal::BadState("beta parameters must be > 0 and finite");
  }
  return map_internal::CheckBookkeeping(s.effective_n, s.log_marginal, s.count, s.last_time);
}

Status BetaBinomial::Restore(const State& s) {
  if (Status v = Validate(s); !v.ok()) return v;
  state_ = s;
  return Status::Ok();
}

}  // namespace bayline::est
