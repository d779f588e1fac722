// Gamma-exponential posterior for an exponential channel (parameter `rate`).
//
// Model (observation y_t > 0, weight w_t > 0):
//   y_t | lambda ~ Exponential(rate lambda) (density lambda exp(-lambda y)),
//   lambda ~ Gamma(shape a0, rate b0)
// Conjugate update: a' = a + w,  b' = b + w y_t  (w != 1 raises the likelihood to the power w).
// Report (one parameter, rate): value = posterior mode (a - 1)/b for a >= 1, else 0;
// posterior_mean = a/b; std_error = sqrt(a)/b; equal-tailed interval from GammaQuantile(., a, b).
// identifiable = true (the posterior is always proper).
//
// One-step predictive (before absorbing y_t): Lomax (Pareto type II) with shape a and scale b,
//   density a b^a / (b + y)^(a+1),  survival S(y) = (b / (b + y))^a,
//   mean b/(a-1) (a > 1, else +Inf), variance b^2 a / ((a-1)^2 (a-2)) (a > 2, else +Inf).
// Innovation: prediction = mean, residual = y - mean (NaN while the mean is infinite),
// predictive_sd = sqrt(variance), standardized = the NORMAL SCORE Phi^{-1}(F(y)) with
// F = -expm1(-a log1p(y/b)) (computed from the smaller tail; exactly N(0,1) under the model and
// defined even when the mean is not), log_predictive = w log density; log_likelihood = their sum
// (= log marginal likelihood when w = 1 and discounting is off).
//
// Domain: y > 0; else kOutOfDomain. Default prior Gamma(1, 1e-3): nearly flat on rates well below
// 1000 per unit of y, so the MAP is close to the maximum-likelihood rate n / sum y.
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

class GammaExponential {
 public:
  struct Options {
    double a0 = 1.0;   // prior shape, > 0
    double b0 = 1e-3;  // prior rate (units of y), > 0
    ForgettingOptions discount;
    Status Validate() const;  // ok or kInvalidConfig naming the field
  };

  using State = GammaRateState;  // Gamma(a, b) posterior of the rate; see gamma_rate_posterior.h

  // Precondition: options.Validate().ok() (asserted). Starts at the prior.
  explicit GammaExponential(const Options& options);

  // Rejections (nothing changes): CheckCommonFields (x must be empty); kOutOfDomain for y <= 0;
  // kNumericalFailure for a non-finite result.
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
