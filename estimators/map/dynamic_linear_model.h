// Dynamic linear model: Bayesian tracker for a regression whose coefficients drift (random walk),
// i.e. the Kalman filter, in square-root (Cholesky-factor) form.
//
// Model (observation t, regressor row x_t of length p, weight w_t > 0):
//   y_t    = x_t' beta_t + v_t,        v_t ~ N(0, V / w_t)      (w is a precision weight)
//   beta_t = beta_{t-1} + u_t,         u_t ~ N(0, W),  W = diag(state_variance)
//   beta_1 ~ N(m1, C1)   (the prior of the coefficients AT THE FIRST OBSERVATION: no drift step is
//                         applied before it; this is the state-space convention of a known initial
//                         state for the first period)
// V and W are given (Options::learn_obs_variance = false, the default) or V is learned (below);
// W is per observation (Sample::time is not used).
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
// Learned observation variance (Options::learn_obs_variance = true): the conjugate "variance
// learning" form of the model, with every variance in units of the unknown V:
//   v_t ~ N(0, V / w_t),  u_t ~ N(0, V W*),  beta_1 | V ~ N(m1, V C1*),  V ~ InvGamma(aV, bV)
// where W* = diag(state_variance), C1* from the initialisation options (also in units of V) and
// (aV, bV) = (obs_variance_shape, obs_variance_scale) at the start. The recursions above run with
// V = 1 (giving Q*, K, C*), then aV += 1/2 and bV += e^2 / (2 Q*). Consequences:
//   predictive  y_t | past ~ f + sqrt((bV/aV) Q*) StudentT(2 aV) (standardized = its normal score,
//               as in nig_regression.h; log_predictive its log density);
//   marginals   beta_j | D ~ m_j + sqrt((bV/aV) C*_jj) StudentT(2 aV), std_error
//               sqrt(bV/(aV-1) C*_jj) (+Inf if aV <= 1), Student-t credible intervals,
//               identifiable = aV > 1; covariance() = bV/(aV-1) C* (+Inf if aV <= 1);
//   Predict(x)  Student-t with scale^2 = (bV/aV)(x'C*x + 1).
// With W* = 0 this is exactly the normal-inverse-gamma regression (nig_regression.h) with
// Lambda0 = C1*^{-1}, m0 = m1, a0 = aV, b0 = bV.
//
// Thread safety: none. No heap allocation in Update() for fixed P (except a rejection's message).
// Instantiations provided: P = 1, 2, 3, 4 and Eigen::Dynamic.
#pragma once

#include <Eigen/Core>
#include <span>
#include <vector>

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
    bool learn_obs_variance = false;        // true: V unknown (see the header comment); then
                                            // obs_variance is ignored and state, diffuse and
                                            // initial variances are in units of V
    double obs_variance_shape = 1e-3;       // aV at the start, > 0 (used when learning)
    double obs_variance_scale = 1e-3;       // bV at the start, > 0 (used when learning)
    Status Validate() const;                // ok or kInvalidConfig naming the field
  };

  struct State {
    Vector m;  // filtered mean (after the last observation; m1 before any)
    Matrix U;  // upper triangular, U'U = C (filtered covariance)
    double log_likelihood = 0;
    double effective_n = 0;  // sum of weights
    double count = 0;        // accepted observations (0: no drift step before the next one)
    double v_shape = 0;      // aV (learned V; 0 when V is given)
    double v_scale = 0;      // bV (learned V; 0 when V is given)
    void Pack(StateWriter& w) const;  // first value is p
    Status Unpack(StateReader& r);    // kInvalidState on a short / long / wrong-p input
  };

  // Precondition: options.Validate().ok() (asserted).
  explicit DynamicLinearModel(const Options& options);

  // Rejections (nothing changes): CheckCommonFields; kNumericalFailure when the result would not be
  // finite, Q <= 0, or the new state would fail Validate. On success fills *out with the one-step
  // innovation.
  Status Update(const Sample& s, Innovation* out = nullptr);
  // Coefficients in regressor order. level in (0, 1), else NaN bounds.
  ParameterReport Report(double level = 0.95) const;
  // See the header comment. valid = false for a bad x or level.
  Prediction Predict(std::span<const double> x, double level = 0.95) const;

  Vector mean() const { return state_.m; }
  Matrix covariance() const;  // Cov(beta | D): U'U (given V) or bV/(aV-1) U'U (learned V)
  int p() const { return p_; }
  const Options& options() const { return options_; }
  const State& state() const { return state_; }
  // The state invariants, shared by Restore and Update (an update whose new state fails them is
  // rejected with kNumericalFailure): size p, m and U finite, U upper triangular with diagonal >=
  // 0, aV and bV finite and > 0 when V is learned, both 0 when it is given, effective_n finite >=
  // 0, the log-likelihood finite, count a whole number >= 0. Ok or kInvalidState.
  Status Validate(const State& s) const;
  // Validate, then replaces; kInvalidState (nothing changed) else.
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
