// Normal-gamma posterior for a gaussian channel (parameters `mean`, `variance`).
//
// Model (observation y_t, weight w_t > 0, a PRECISION weight as in nig_regression.h):
//   y_t | mu, sigma^2 ~ N(mu, sigma^2 / w_t)
//   mu | sigma^2 ~ N(m0, sigma^2 / kappa0),   1 / sigma^2 ~ Gamma(shape a0, rate b0)
// Conjugate update (scalar, in the stable "Welford" form, no sums of squares):
//   kappa' = kappa + w,  m' = m + w (y - m) / kappa',  a' = a + 1/2,
//   b' = b + kappa w (y - m)^2 / (2 kappa').
// Marginals: mu | D ~ m + sqrt(b / (a kappa)) StudentT(2a);  sigma^2 | D ~ InvGamma(a, b).
// Report (order: mean, variance):
//   mean:     value = posterior_mean = m (posterior_mean NaN if 2a <= 1);
//             std_error = sqrt(b / ((a - 1) kappa)) (+Inf if a <= 1); Student-t credible interval.
//   variance: value = b / (a + 3/2), the JOINT posterior mode of (mu, sigma^2) (the MAP);
//             posterior_mean = b / (a - 1) (NaN if a <= 1);
//             std_error = b / ((a - 1) sqrt(a - 2)) (+Inf if a <= 2);
//             interval from inverse-gamma quantiles [1/G^{-1}(1 - q), 1/G^{-1}(q)], G = Gamma(a,
//             b).
// identifiable: the posterior is proper and both posterior sds are finite (a > 2).
//
// One-step predictive (before absorbing y_t):
//   y_t | past ~ m + s StudentT(2a),  s^2 = (b / a) (1 / w_t + 1 / kappa).
// Innovation fields as in nig_regression.h (standardized = the normal score Phi^{-1}(F(y_t)));
// log_likelihood = sum of log predictive densities = log marginal likelihood (discount off).
//
// Default prior (weakly informative, not scale free): m0 = 0, kappa0 = 1e-6, a0 = b0 = 1e-3.
// Flat prior (Options::flat_prior): p(mu, sigma^2) ∝ 1/sigma^2 (kappa0 = 0, a0 = -1/2, b0 = 0):
// proper after two distinct observations; before that Report() is not identifiable (NaN vectors)
// and innovations are invalid and left out of log_likelihood.
//
// Discounting (power prior toward the initial prior, before each observation, delta from
// Options::discount): the natural parameters kappa, kappa m, kappa m^2 + 2b and a are mixed
//   n <- delta n + (1 - delta) n0,
// computed in the cancellation-free form kappa'' = delta kappa + (1-delta) kappa0,
// m'' = (delta kappa m + (1-delta) kappa0 m0) / kappa'',
// 2b'' = delta 2b + (1-delta) 2b0 + delta (1-delta) kappa kappa0 (m - m0)^2 / kappa''.
// delta = 1 is the exact posterior.
//
// Thread safety: none. No heap allocation in Update() (except a rejection's message).
#pragma once

#include "estimators/core/forgetting.h"
#include "estimators/core/report.h"
#include "estimators/core/sample.h"
#include "estimators/core/state_codec.h"
#include "estimators/core/status.h"

namespace bayline::est {

class NormalGamma {
 public:
  struct Options {
    bool flat_prior = false;  // true: 1/sigma^2 prior; the four fields below are ignored
    double m0 = 0.0;          // finite
    double kappa0 = 1e-6;     // > 0
    double a0 = 1e-3;         // > 0
    double b0 = 1e-3;         // > 0
    ForgettingOptions discount;
    Status Validate() const;  // ok or kInvalidConfig naming the field
  };

  struct State {
    double m = 0, kappa = 0, a = 0, b = 0;
    double effective_n = 0, log_marginal = 0, count = 0;
    double last_time = kNaN;  // latest time among accepted observations (NaN: none timed)
    void Pack(StateWriter& w) const;
    Status Unpack(StateReader& r);  // kInvalidState on a short / long input
  };

  // Precondition: options.Validate().ok() (asserted). Starts at the prior.
  explicit NormalGamma(const Options& options);

  // Rejections (nothing changes): CheckCommonFields (x must be empty); kNumericalFailure if the
  // result would not be finite. On success fills *out with the predictive innovation.
  Status Update(const Sample& s, Innovation* out = nullptr);
  // Parameters: mean, variance (see above). level in (0, 1), else NaN bounds.
  ParameterReport Report(double level = 0.95) const;

  bool proper() const;  // kappa > 0, a > 0, b > 0
  const Options& options() const { return options_; }
  const State& state() const { return state_; }
  // The state invariants, shared by Restore and Update (an update whose new state fails them is
  // rejected with kNumericalFailure): m, a finite, kappa and b finite >= 0, effective_n finite >=
  // 0, the log marginal likelihood finite, count a whole number >= 0, last_time not infinite.
  static Status Validate(const State& s);
  // Validate, then replaces; kInvalidState (nothing changed) else.
  Status Restore(const State& s);

 private:
  Options options_;
  State prior_;
  State state_;
};

}  // namespace bayline::est
