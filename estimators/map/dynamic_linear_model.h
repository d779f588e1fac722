// Dynamic linear model: Bayesian tracker for a regression whose coefficients drift (random walk),
// i.e. the Kalman filter, in square-root (Cholesky-factor) form.
//
// Model (observation t, regressor row x_t of length p, weight w_t > 0):
//   y_t    = x_t' beta_t + v_t,        v_t ~ N(0, V / w_t)      (w is a precision weight)
//   beta_t = beta_{t-1} + u_t,         u_t ~ N(0, W),  W = diag(state_variance)
//   beta_1 ~ N(m1, C1)   (the prior of the coefficients AT THE FIRST OBSERVATION: no drift step is
//                         applied before it; this is the state-space convention of a known initial
//                         state for the first period)
// V and W are given (not learned); W is per observation (Sample::time is not used).
// Recursions, with C = U'U (U upper triangular, the state's factor):
//   drift (before every observation but the first):  a = m,  R = C + W;
//   predictive:  f = x' a,  Q = x' R x + V / w;   e = y - f;
//   update:      K = R x / Q,  m = a + K e,  C = R - R x x' R / Q.
// Square-root form: R's factor is the triangle of [U; sqrt(W)] and the update triangularises the
// array [[sqrt(V/w), 0], [U_R x, U_R]] = Q_orth [[sqrt(Q), k'], [0, U_C]], K = k / sqrt(Q),
// both by Givens rotations, so C stays symmetric positive semidefinite by construction.
//
// Initialisation (Options::diffuse):
//   true  (default): approximate diffuse, m1 = 0, C1 = diffuse_variance I (default 1e6); this is
//                    the state-space convention called "approximate diffuse" with that initial
//                    variance, and the log-likelihood includes every observation;
//   false: known, m1 = initial_mean, C1 = diag(initial_variance).
//
// Report: value = posterior_mean = m (filtered mean, also the mode: the posterior is gaussian),
// std_error = sqrt(diag C), equal-tailed normal credible interval; identifiable = true.
// Innovation (before absorbing y_t): prediction = f, residual = e, predictive_sd = sqrt(Q),
// standardized = e / sqrt(Q) (exactly N(0,1) under the model), log_predictive = log N(y; f, Q);
// log_likelihood in Report() = their running sum (the exact Gaussian log-likelihood of the data).
// Predict(x): the current (filtered) coefficients, no further drift: mean x'm, mean_sd^2 = x'Cx,
// sd^2 = x'Cx + V, normal prediction interval.
//
// Thread safety: none. No heap allocation in Update() for fixed P (except a rejection's message).
// Instantiations provided: P = 1, 2, 3, 4 and Eigen::Dynamic.
#pragma once

#include <span>
#include <vector>

#include <Eigen/Core>

#include "estimators/core/report.h"
#include "estimators/core/sample.h"
#include "estimators/core/state_codec.h"
#include "estimators/core/status.h"

namespace bayline::est {

template <int P = Eigen::Dynamic>
class DynamicLinearModel {
 public:
  using Vector = Eigen::Matrix<double, P, 1>;
  using Matrix = Eigen::Matrix<double, P, P>;

  struct Options {
    int p = (P == Eigen::Dynamic) ? 1 : P;  // regressor count; must equal P for fixed P; >= 1
    double obs_variance = 1.0;              // V > 0, finite
    std::vector<double> state_variance;     // diag(W), length p, each >= 0 and finite (0 = fixed
                                            // coefficient); empty = all zero (static regression)
    bool diffuse = true;                    // see the header comment
    double diffuse_variance = 1e6;          // > 0, finite (used when diffuse)
    std::vector<double> initial_mean;       // used when !diffuse: length p, finite (empty = zeros)
    std::vector<double> initial_variance;   // used when !diffuse: length p, each > 0 and finite
    Status Validate() const;                // ok or kInvalidConfig naming the field
  };

  struct State {
    Vector m;   // filtered mean (after the last observation; m1 before any)
    Matrix U;   // upper triangular, U'U = C (filtered covariance)
    double log_likelihood = 0;
    double effective_n = 0;  // sum of weights
    double count = 0;        // accepted observations (0: no drift step before the next one)
    void Pack(StateWriter& w) const;  // first value is p
    Status Unpack(StateReader& r);    // kInvalidState on a short / long / wrong-p input
  };

  // Precondition: options.Validate().ok() (asserted).
  explicit DynamicLinearModel(const Options& options);

  // Rejections (nothing changes): CheckCommonFields; kNumericalFailure when the result would not be
  // finite or Q <= 0. On success fills *out with the one-step innovation.
  Status Update(const Sample& s, Innovation* out = nullptr);
  // Coefficients in regressor order. level in (0, 1), else NaN bounds.
  ParameterReport Report(double level = 0.95) const;
  // See the header comment. valid = false for a bad x or level.
  Prediction Predict(std::span<const double> x, double level = 0.95) const;

  Vector mean() const { return state_.m; }
  Matrix covariance() const;  // C = U'U
  int p() const { return p_; }
  const Options& options() const { return options_; }
  const State& state() const { return state_; }
  // Validates (size p, finite, U upper triangular with diagonal >= 0), then replaces;
  // kInvalidState else.
  Status Restore(const State& s);

 private:
  static constexpr int kAug = (P == Eigen::Dynamic) ? Eigen::Dynamic : P + 1;
  using AugMatrix = Eigen::Matrix<double, kAug, kAug>;
  using AugRow = Eigen::Matrix<double, 1, kAug>;

  Options options_;
  int p_;
  Vector sqrt_w_;  // sqrt(diag W)
  State state_;
  // Scratch for Update, preallocated (no heap use when p is dynamic).
  Matrix u_work_;
  Vector ux_;
  AugMatrix array_;
  AugRow row_;
};

}  // namespace bayline::est
