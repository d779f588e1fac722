// LinearMl: maximum likelihood for the linear-gaussian model, on the recursion of Rls.
//
// Model: y_t = x_t' theta + e_t,  e_t ~ N(0, sigma^2 / w_t), log-likelihood (weights multiply each
// observation's log-density, discounted by forgetting like everything else):
//   l(theta, sigma^2) = -1/2 sum_t w_t [ log(2 pi sigma^2) + (y_t - x_t' theta)^2 / sigma^2 ]
//                       (+ 1/2 sum_t w_t log w_t, a constant left out).
// Maximum: theta_ML = theta_OLS = R^{-1} z (same R, z, S, n_eff as Rls), sigma^2_ML = S / n_eff,
// and
//   l_max = -n_eff / 2 * (log(2 pi sigma^2_ML) + 1).
// Standard errors from the inverse Fisher information: Cov(theta) = sigma^2_ML (R'R)^{-1};
// intervals are Wald intervals theta_j +/- z_{(1+level)/2} se_j. The unbiased variance S / (n_eff -
// p) is reported beside sigma^2_ML. Predictive density of a new y at x (plug-in, parameter
// uncertainty included):
//   y ~ N(x' theta, sigma^2_ML (1/w + x'(R'R)^{-1} x)).
#pragma once

#include <Eigen/Core>
#include <span>

#include "estimators/ls/rls.h"

namespace bayline::est {

class LinearMl {
 public:
  struct State {
    Rls::State rls;
    double cumulative_log_predictive = 0.0;  // sum of the one-step log predictive densities
    void Pack(StateWriter& w) const;
    Status Unpack(StateReader& r);
  };

  // p >= 1; options valid (assert). robust mode is allowed but then the estimate is a Huber
  // M-estimate, not ML.
  LinearMl(const RlsOptions& options, int p);

  // Absorbs one observation. *out (if given): innovation from the state before it, with a gaussian
  // predictive N(x'theta, sigma^2_ML (1/w + x'(R'R)^{-1}x)) (valid once identified with n_eff > p).
  // Rejections as Rls::Update, and kNumericalFailure when the new state would fail Validate (the
  // cumulative log predictive would not be finite); state and *out unchanged.
  Status Update(const Sample& s, Innovation* out = nullptr);

  // value = theta_ML, std_error from sigma^2_ML (R'R)^{-1}, Wald intervals (normal quantile),
  // log_likelihood = l_max, effective_n = n_eff. identifiable = false (NaN vectors) until
  // identified; std errors NaN while n_eff <= p.
  ParameterReport Report(double level = 0.95) const;

  // log density of y at x under the plug-in predictive above (weight 1); NaN if not identified, if
  // n_eff <= p, or if x has the wrong size or non-finite entries.
  double PredictiveLogDensity(std::span<const double> x, double y) const;

  // Plug-in gaussian predictive of a new y at the full regressor row x:
  //   mean = x'theta,  mean_sd^2 = x' Cov(theta) x,  sd^2 = mean_sd^2 + sigma^2_ML,
  //   interval mean -+ z_{(1+level)/2} sd.
  // valid = false (and the other fields NaN, level as given) when not identified, while n_eff <= p,
  // when x.size() != p or when level is outside (0, 1).
  Prediction Predict(std::span<const double> x, double level = 0.95) const;

  Eigen::VectorXd coefficients() const { return rls_.coefficients(); }
  Eigen::MatrixXd covariance() const;  // sigma^2_ML (R'R)^{-1}
  double sigma2_ml() const;            // S / n_eff (NaN while n_eff <= p or unidentified)
  double sigma2_unbiased() const { return rls_.residual_variance(); }  // S / (n_eff - p)
  double log_likelihood() const;                                       // l_max (NaN as sigma2_ml)
  double cumulative_log_predictive() const { return cumulative_log_predictive_; }
  const Rls& rls() const { return rls_; }

  Status InflateUncertainty(double factor) { return rls_.InflateUncertainty(factor); }
  void Reset();

  State state() const;
  // The state invariants, shared by Restore and Update: Rls::Validate of the recursion's state and
  // a finite cumulative log predictive. Ok or kInvalidState.
  Status Validate(const State& s) const;
  Status Restore(const State& s);  // Validate, then replaces; nothing changes on failure

 private:
  // The invariant of the part of the state this class adds to Rls's.
  static Status ValidateCumulative(double cumulative_log_predictive);

  Rls rls_;
  double cumulative_log_predictive_ = 0.0;
};

}  // namespace bayline::est
