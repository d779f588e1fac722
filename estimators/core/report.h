// What estimators publish: a parameter report (on demand) and a one-step innovation (per update).
#pragma once

#include <limits>
#include <vector>

namespace bayline::est {

inline constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

// One estimator's current view of its parameters, in the estimator's documented parameter order.
//   ls  : value = coefficient, std_error = standard error, [lower, upper] = t confidence interval;
//   ml  : value = MLE, std_error from the observed/expected Fisher information, Wald interval;
//   map : value = posterior mode (MAP), std_error = posterior sd, [lower, upper] = equal-tailed
//         credible interval, posterior_mean filled.
// Before the data identify the parameters `identifiable` is false and the vectors hold NaN.
struct ParameterReport {
  std::vector<double> value;
  std::vector<double> std_error;
  std::vector<double> lower;
  std::vector<double> upper;
  std::vector<double> posterior_mean;  // map only; empty for ls and ml
  double level = 0.95;                 // coverage of [lower, upper]
  bool identifiable = false;
  double effective_n = 0;        // sum of (forgetting-discounted) observation weights
  double log_likelihood = kNaN;  // ls/ml: running log-likelihood at the estimate;
                                 // map: log marginal likelihood of the data seen
};

// The one-step-ahead view of an accepted observation, computed from the state BEFORE it was
// absorbed. Detectors watch `standardized`, which is ~ N(0, 1) while the channel is in control.
struct Innovation {
  bool valid = false;            // false while there is no proper predictive yet
  double prediction = kNaN;      // E[y | past]
  double residual = kNaN;        // y - prediction (a-priori innovation)
  double predictive_sd = kNaN;   // sd of the one-step predictive of y
  double standardized = kNaN;    // residual / predictive_sd, or a normal score of the predictive
  double log_predictive = kNaN;  // log density (or mass) of y under the one-step predictive
};

// A prediction of y for a new regressor row (calibration on the fly).
struct Prediction {
  bool valid = false;
  double mean = kNaN;     // predicted E[y | x]
  double sd = kNaN;       // sd of a NEW observation at x (parameter + noise uncertainty)
  double mean_sd = kNaN;  // sd of the fitted mean at x (parameter uncertainty only)
  double lower = kNaN;    // prediction interval for a new observation at `level`
  double upper = kNaN;
  double level = 0.95;
};

}  // namespace bayline::est
