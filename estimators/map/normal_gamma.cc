#include "estimators/map/normal_gamma.h"

#include <cassert>
#include <cmath>

#include "estimators/core/distributions.h"
#include "estimators/core/t_log_density.h"
#include "estimators/map/posterior_util.h"

namespace bayline::est {

using map_internal::kInf;

Status NormalGamma::Options::Validate() const {
  if (!flat_prior) {
    if (!std::isfinite(m0)) return map_internal::Config("m0 must be finite");
    if (!(kappa0 > 0) || !std::isfinite(kappa0)) {
      return map_internal::Config("kappa0 must be > 0 and finite");
    }
    if (!(a0 > 0) || !std::isfinite(a0)) return map_internal::Config("a0 must be > 0 and finite");
    if (!(b0 > 0) || !std::isfinite(b0)) return map_internal::Config("b0 must be > 0 and finite");
  }
  return discount.Validate();
}

NormalGamma::NormalGamma(const Options& options) : options_(options) {
  assert(options.Validate().ok());
  if (options_.flat_prior) {
    prior_.m = 0, prior_.kappa = 0, prior_.a = -0.5, prior_.b = 0;
  } else {
    prior_.m = options_.m0, prior_.kappa = options_.kappa0;
    prior_.a = options_.a0, prior_.b = options_.b0;
  }
  state_ = prior_;
}

bool NormalGamma::proper() const { return state_.kappa > 0 && state_.a > 0 && state_.b > 0; }

Status NormalGamma::Update(const Sample& s, Innovation* out) {
  if (Status st = CheckCommonFields(s, 0); !st.ok()) return st;
  const double delta = ForgettingFactor(options_.discount, s.time, state_.last_time);
  double m = state_.m, kappa = state_.kappa, a = state_.a, b = state_.b;
  if (delta < 1.0) {
    // Power prior: natural parameters mixed, in the form that needs no difference of squares.
    const double k1 = delta * kappa, k0 = (1.0 - delta) * prior_.kappa, kn = k1 + k0;
    const double dm = m - prior_.m;
    b = delta * b + (1.0 - delta) * prior_.b + (kn > 0 ? 0.5 * k1 * k0 * dm * dm / kn : 0.0);
    if (kn > 0) m = (k1 * m + k0 * prior_.m) / kn;
    kappa = kn;
    a = delta * a + (1.0 - delta) * prior_.a;
  }

  const double w = s.weight, d = s.y - m;
  Innovation inn;
  if (kappa > 0 && a > 0 && b > 0) {
    const double nu = 2.0 * a;
    const double scale = std::sqrt(b / a * (1.0 / w + 1.0 / kappa));
    const double t = d / scale;
    inn.valid = true;
    inn.prediction = m;
    inn.residual = d;
    inn.predictive_sd = nu > 2 ? scale * std::sqrt(nu / (nu - 2)) : kInf;
    // The normal score costs an incomplete beta and a normal quantile; only a caller that asked
    // for the innovation reads it.
    if (out) inn.standardized = map_internal::StudentTNormalScore(t, nu);
    inn.log_predictive = StudentTLogDensity(t, nu) - std::log(scale);
    if (!std::isfinite(inn.log_predictive) || (out && !std::isfinite(inn.standardized))) {
      return map_internal::Numerical("predictive density not finite");
    }
  }

  const double kn = kappa + w;
  const double m_new = m + w * d / kn;
  const double b_new = b + 0.5 * kappa * w * d * d / kn;
  if (!std::isfinite(m_new) || !std::isfinite(b_new) || !std::isfinite(kn)) {
    return map_internal::Numerical("normal-gamma posterior not finite");
  }
  State next = state_;
  next.m = m_new, next.kappa = kn, next.a = a + 0.5, next.b = b_new;
  next.effective_n = delta * state_.effective_n + w;
  if (inn.valid) next.log_marginal += inn.log_predictive;
  next.count += 1;
  next.last_time = map_internal::LatestTime(state_.last_time, s.time);
  if (Status v = Validate(next); !v.ok()) return map_internal::InvalidNext(v);
  state_ = next;
  if (out) *out = inn;
  return Status::Ok();
}

ParameterReport NormalGamma::Report(double level) const {
  ParameterReport r;
  r.value.assign(2, kNaN);
  r.std_error.assign(2, kNaN);
  r.lower.assign(2, kNaN);
  r.upper.assign(2, kNaN);
  r.posterior_mean.assign(2, kNaN);
  r.level = level;
  r.effective_n = state_.effective_n;
  r.log_likelihood = state_.log_marginal;
  if (!proper()) return r;
  const double m = state_.m, kappa = state_.kappa, a = state_.a, b = state_.b, nu = 2 * a;
  const bool level_ok = map_internal::LevelOk(level);
  const double q = 0.5 - 0.5 * level;  // lower tail probability of the interval

  const double scale = std::sqrt(b / (a * kappa));
  const double tq = level_ok ? dist::StudentTQuantile(1.0 - q, nu) : kNaN;
  r.value[0] = m;
  r.posterior_mean[0] = nu > 1 ? m : kNaN;
  r.std_error[0] = a > 1 ? std::sqrt(b / ((a - 1) * kappa)) : kInf;
  r.lower[0] = m - tq * scale;
  r.upper[0] = m + tq * scale;

  r.value[1] = b / (a + 1.5);
  r.posterior_mean[1] = a > 1 ? b / (a - 1) : kNaN;
  r.std_error[1] = a > 2 ? b / ((a - 1) * std::sqrt(a - 2)) : kInf;
  if (level_ok) {
    // sigma^2 = 1 / tau, tau ~ Gamma(a, rate b): the tails swap.
    r.lower[1] = 1.0 / dist::GammaQuantile(1.0 - q, a, b);
    r.upper[1] = 1.0 / dist::GammaQuantile(q, a, b);
  }
  r.identifiable = a > 2;
  return r;
}

void NormalGamma::State::Pack(StateWriter& w) const {
  for (double v : {m, kappa, a, b, effective_n, log_marginal, count, last_time}) w.Put(v);
}

Status NormalGamma::State::Unpack(StateReader& r) {
  for (double* v : {&m, &kappa, &a, &b, &effective_n, &log_marginal, &count, &last_time}) {
    r.Get(*v);
  }
  return r.status();
}

Status NormalGamma::Validate(const State& s) {
  if (!std::isfinite(s.m) || !std::isfinite(s.a) || !(s.kappa >= 0) || !std::isfinite(s.kappa) ||
      !(s.b >= 0) || !std::isfinite(s.b)) {
    return map_internal::BadState("normal-gamma parameters invalid");
  }
  return map_internal::CheckBookkeeping(s.effective_n, s.log_marginal, s.count, s.last_time);
}

Status NormalGamma::Restore(const State& s) {
  if (Status v = Validate(s); !v.ok()) return v;
  state_ = s;
  return Status::Ok();
}

}  // namespace bayline::est
