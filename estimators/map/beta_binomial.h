// Beta-binomial posterior for a binomial channel (parameter `probability`).
//
// Model (observation: y_t successes in n_t = `trials` trials, weight w_t > 0):
//   y_t | q ~ Binomial(n_t, q),   q ~ Beta(alpha0, beta0)
// Conjugate update: alpha' = alpha + w y_t,  beta' = beta + w (n_t - y_t).
// A weight w != 1 raises the likelihood to the power w (a frequency weight: w = 3 is the same as
// three copies of the observation for the posterior).
// Report (one parameter, probability):
//   value = posterior mode (alpha-1)/(alpha+beta-2) when alpha > 1 and beta > 1; otherwise the mode
//   is at a boundary: 0 if alpha <= 1 < beta, 1 if beta <= 1 < alpha; when both are <= 1 there is
//   no unique mode and value is 0 if alpha < beta, 1 if alpha > beta, 1/2 if equal (Beta(1,1) is
//   flat); posterior_mean = alpha/(alpha+beta); std_error = posterior sd; equal-tailed interval
//   from BetaQuantile. identifiable = true (the posterior is always proper).
//
// One-step predictive (before absorbing y_t): y_t | past ~ BetaBinomial(n_t, alpha, beta),
//   log P(y) = log C(n, y) + log B(y + alpha, n - y + beta) - log B(alpha, beta),
//   with s = alpha + beta: mean n alpha / s, variance n alpha beta (s + n) / (s^2 (s + 1)).
// Innovation: prediction = mean, residual = y - mean, predictive_sd = sqrt(variance),
// standardized = residual / predictive_sd (a discrete predictive has no exact normal score; 0 when
// the predictive is degenerate), log_predictive = w log P(y_t) (the weighted log score; with w = 1
// it is the log predictive mass, and log_likelihood = sum = log marginal likelihood of the data).
//
// Domain: y and trials integers (to within 1e-9 relative), 0 <= y <= trials, trials >= 1;
// otherwise kOutOfDomain. Default prior Beta(1, 1) (uniform).
//
// Discounting (power prior toward the initial prior before each observation, delta from
// Options::discount): alpha <- delta alpha + (1-delta) alpha0, beta <- delta beta + (1-delta) beta0
// (the natural parameters alpha-1, beta-1 mixed linearly). delta = 1 is the exact posterior.
//
// Thread safety: none. No heap allocation in Update() (except a rejection's message).
#pragma once

#include "estimators/core/forgetting.h"
#include "estimators/core/report.h"
#include "estimators/core/sample.h"
#include "estimators/core/state_codec.h"
#include "estimators/core/status.h"

namespace bayline::est {

class BetaBinomial {
 public:
  struct Options {
    double alpha0 = 1.0;  // > 0, finite
    double beta0 = 1.0;   // > 0, finite
    ForgettingOptions discount;
    Status Validate() const;  // ok or kInvalidConfig naming the field
  };

  struct State {
    double alpha = 1, beta = 1;
    double effective_n = 0, log_marginal = 0, count = 0;
    double last_time = kNaN;  // latest time among accepted observations (NaN: none timed)
    void Pack(StateWriter& w) const;
    Status Unpack(StateReader& r);  // kInvalidState on a short / long input
  };

  // Precondition: options.Validate().ok() (asserted). Starts at the prior.
  explicit BetaBinomial(const Options& options);

  // Rejections (nothing changes): CheckCommonFields (x must be empty); kOutOfDomain for negative or
  // non-integer counts, trials < 1 or y > trials; kNumericalFailure for a non-finite result.
  Status Update(const Sample& s, Innovation* out = nullptr);
  // Parameter: probability. level in (0, 1), else NaN bounds.
  ParameterReport Report(double level = 0.95) const;

  const Options& options() const { return options_; }
  const State& state() const { return state_; }
  // The state invariants, shared by Restore and Update (an update whose new state fails them is
  // rejected with kNumericalFailure): alpha, beta > 0 and finite, effective_n finite >= 0, the log
  // marginal likelihood finite, count a whole number >= 0, last_time not infinite.
  static Status Validate(const State& s);
  // Validate, then replaces; kInvalidState (nothing changed) else.
  Status Restore(const State& s);

 private:
  Options options_;
  State state_;
};

}  // namespace bayline::est
