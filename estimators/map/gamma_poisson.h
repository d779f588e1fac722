// Gamma-Poisson posterior for a poisson channel (parameter `rate`, events per unit of exposure).
//
// Model (observation: count y_t in exposure e_t > 0, weight w_t > 0):
//   y_t | lambda ~ Poisson(lambda e_t),   lambda ~ Gamma(shape a0, rate b0)
// Conjugate update: a' = a + w y_t,  b' = b + w e_t  (w != 1 raises the likelihood to the power w).
// Report (one parameter, rate): value = posterior mode (a - 1)/b for a >= 1, else 0;
// posterior_mean = a/b; std_error = sqrt(a)/b; equal-tailed interval from GammaQuantile(., a, b).
// identifiable = true (the posterior is always proper).
//
// One-step predictive (before absorbing y_t): negative binomial,
//   P(y) = Gamma(a + y) / (Gamma(a) y!) (b/(b+e))^a (e/(b+e))^y,
//   mean a e / b, variance a e (b + e) / b^2.
// Innovation: prediction = mean, residual = y - mean, predictive_sd = sqrt(variance),
// standardized = residual / predictive_sd (discrete predictive: no exact normal score),
// log_predictive = w log P(y_t); log_likelihood = their sum (= log marginal likelihood when w = 1
// and discounting is off).
//
// Domain: y a non-negative integer (to within 1e-9 relative), exposure > 0; else kOutOfDomain.
// Default prior Gamma(1, 1e-3): nearly flat on rates well below 1000 per unit exposure, so the MAP
// is close to the maximum-likelihood rate sum y / sum e. Not scale free: set b0 for your units.
//
// Discounting (power prior toward the initial prior before each observation, delta from
// Options::discount): a <- delta a + (1-delta) a0, b <- delta b + (1-delta) b0. delta = 1 is exact.
//
// Thread safety: none. No heap allocation in Update() (except a rejection's message).
#pragma once

#include "estimators/core/forgetting.h"
#include "estimators/core/report.h"
#include "estimators/core/sample.h"
#include "estimators/core/state_codec.h"
#include "estimators/core/status.h"
#include "estimators/map/gamma_rate_posterior.h"

namespace bayline::est {

class GammaPoisson {
 public:
  struct Options {
    double a0 = 1.0;   // prior shape, > 0
    double b0 = 1e-3;  // prior rate (units: exposure), > 0
    ForgettingOptions discount;
    Status Validate() const;  // ok or kInvalidConfig naming the field
  };

  using State = GammaRateState;  // Gamma(a, b) posterior of the rate; see gamma_rate_posterior.h

  // Precondition: options.Validate().ok() (asserted). Starts at the prior.
  explicit GammaPoisson(const Options& options);

  // Rejections (nothing changes): CheckCommonFields (x must be empty); kOutOfDomain for a negative
  // or non-integer count or exposure <= 0; kNumericalFailure for a non-finite result.
  Status Update(const Sample& s, Innovation* out = nullptr);
  // Parameter: rate. level in (0, 1), else NaN bounds.
  ParameterReport Report(double level = 0.95) const;

  const Options& options() const { return options_; }
  const State& state() const { return state_; }
  // ValidateGammaRateState (the invariants Update also applies to its new state, rejecting with
  // kNumericalFailure), then replaces; kInvalidState (nothing changed) else.
  Status Restore(const State& s);

 private:
  Options options_;
  State state_;
};

}  // namespace bayline::est
