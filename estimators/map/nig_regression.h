// Normal-inverse-gamma (NIG) Bayesian linear regression, updated exactly one observation at a time.
//
// Model (observation t, regressor row x_t of length p, weight w_t > 0):
//   y_t | beta, sigma^2 ~ N(x_t' beta, sigma^2 / w_t)                (w is a PRECISION weight)
//   beta | sigma^2      ~ N(m0, sigma^2 Lambda0^{-1}),   sigma^2 ~ InvGamma(a0, b0)
// Posterior after the data (closed form, conjugate):
//   beta | sigma^2, D   ~ N(m, sigma^2 Lambda^{-1}),     sigma^2 | D ~ InvGamma(a, b)
//   Lambda = Lambda0 + sum w x x',  Lambda m = Lambda0 m0 + sum w x y,  a = a0 + n / 2,
//   2 b    = 2 b0 + m0' Lambda0 m0 + sum w y^2 - m' Lambda m.
// Square-root form (stable; no covariance recursion): the state holds the (p+1)x(p+1) upper
// triangular factor F of the augmented information matrix,
//   F = [ R  z      ]     F'F = [ Lambda      Lambda m          ]     R'R = Lambda,  z = R m,
//       [ 0  sqrt(2b) ]         [ m'Lambda    m'Lambda m + 2 b  ],    b = F(p,p)^2 / 2.
// The prior enters as the pseudo-rows F0 (built from m0, Lambda0, b0); each observation is the row
// sqrt(w) [x', y] absorbed into F by Givens rotations (square-root information RLS), so Lambda
// stays symmetric positive definite by construction.
//
// Marginals: beta_j | D ~ m_j + sqrt((b / a) (Lambda^{-1})_jj) * StudentT(2a).
// Reported per coefficient: value = m_j (the joint posterior mode in beta; also the marginal mode),
// posterior_mean = m_j (needs 2a > 1, else NaN), std_error = posterior sd
// sqrt(b / (a - 1) (Lambda^{-1})_jj) (needs a > 1, else +Inf), equal-tailed credible interval from
// the Student-t quantiles of core/distributions.h.
// identifiable: the posterior is proper and every posterior sd is finite (a > 1).
//
// One-step predictive of y_t at x_t BEFORE absorbing it (posterior predictive):
//   y_t | past ~ x_t' m + s * StudentT(2a),  s^2 = (b / a) (1 / w_t + x_t' Lambda^{-1} x_t).
// Innovation: prediction = x_t' m; residual = y_t - prediction; predictive_sd = s sqrt(nu/(nu-2))
// (+Inf when nu = 2a <= 2); standardized = the NORMAL SCORE Phi^{-1}(F_t(residual / s)), which is
// exactly N(0, 1) under the model whatever the degrees of freedom (computed from the smaller tail,
// so large scores keep their precision); log_predictive = log density of y_t under the predictive.
// log_likelihood in Report() = sum of log_predictive over accepted observations = the log marginal
// likelihood log p(y_1..y_n | x_1..x_n) (exact with discount off; with discounting it is the
// prequential log score).
//
// Flat prior (Options::flat_prior): p(beta, sigma^2) ∝ 1 / sigma^2, i.e. Lambda0 = 0, m0 = 0,
// b0 = 0, a0 = -p / 2. The posterior is proper once Lambda has full rank and a > 0 (n > p); then m
// is the ordinary least squares estimate and 2b its residual sum of squares. Before that, Report()
// has identifiable = false and NaN vectors, and innovations are invalid (valid = false) and do not
// enter log_likelihood (which is then the log marginal likelihood of the later observations given
// the earlier ones).
//
// Default prior (weakly informative; it is NOT scale free, choose your own when y or x have extreme
// scales): m0 = 0, Lambda0 = 1e-6 I (prior sd of each coefficient 1000 sigma), a0 = b0 = 1e-3.
//
// Discounting (power-prior forgetting, for drifting coefficients): before each observation the
// posterior is flattened toward the initial prior,
//   F'F <- delta F'F + (1 - delta) F0'F0,     a <- delta a + (1 - delta) a0,
// i.e. the natural parameters (Lambda, Lambda m, m'Lambda m + 2b, a) of p(beta, sigma^2 | D)^delta
// p0^(1-delta) (normalised). delta comes from Options::discount (core/forgetting.h): a fixed factor
// per observation or 2^(-dt / half_life). delta = 1 gives the exact posterior. In square-root form
// the rows sqrt(1 - delta) F0 are absorbed into sqrt(delta) F by Givens rotations.
//
// Thread safety: none; one object per channel, used by one thread. No heap allocation in Update()
// for fixed P (except building the message of a rejection Status). Template instantiations
// provided: P = 1, 2, 3, 4 and Eigen::Dynamic.
#pragma once

#include <Eigen/Core>
#include <span>
#include <vector>

#include "estimators/core/forgetting.h"
#include "estimators/core/report.h"
#include "estimators/core/sample.h"
#include "estimators/core/state_codec.h"
#include "estimators/core/status.h"

namespace bayline::est {

template <int P = Eigen::Dynamic>
class NigRegression {
 public:
  static constexpr int kAug = (P == Eigen::Dynamic) ? Eigen::Dynamic : P + 1;
  using Vector = Eigen::Matrix<double, P, 1>;
  using Matrix = Eigen::Matrix<double, P, P>;
  using AugMatrix = Eigen::Matrix<double, kAug, kAug>;

  struct Options {
    // Number of regressors (the full row length, intercept column included). Default: P, or 1
    // when P is Dynamic. Must equal P for fixed P; >= 1.
    int p = (P == Eigen::Dynamic) ? 1 : P;
    // true: the improper prior 1/sigma^2 (see above); the prior fields below are then ignored.
    bool flat_prior = false;
    // Prior mean m0 of beta; empty = zeros, else length p, finite.
    std::vector<double> prior_mean;
    // Diagonal of Lambda0 (prior precision of beta in units of 1/sigma^2); empty = 1e-6 for every
    // coefficient, else length p, each > 0 and finite.
    std::vector<double> prior_precision;
    double a0 = 1e-3;  // prior shape of sigma^2, > 0
    double b0 = 1e-3;  // prior scale of sigma^2, > 0
    // Discount factor delta (lambda, per observation) or half-life in seconds; default off.
    ForgettingOptions discount;

    // Ok, or kInvalidConfig naming the first bad field.
    Status Validate() const;
  };

  // Everything that changes with the data. Plain values; Pack/Unpack flatten it (the first value is
  // p, so a state for another p is rejected).
  struct State {
    AugMatrix factor;         // F above: upper triangular, diagonal >= 0
    double a = 0;             // posterior shape
    double effective_n = 0;   // discounted sum of weights
    double log_marginal = 0;  // sum of log predictive densities of the valid innovations
    double count = 0;         // accepted observations
    double last_time = kNaN;  // latest time among accepted observations (NaN: none timed)

    void Pack(StateWriter& w) const;
    // Reads a packed state; on failure returns kInvalidState (this State may be partly written).
    Status Unpack(StateReader& r);
  };

  // Precondition: options.Validate().ok() (asserted). Starts at the prior.
  explicit NigRegression(const Options& options);

  // Absorbs one observation. Rejections (nothing changes): kNonFinite / kWrongRegressorCount /
  // kInvalidWeight from CheckCommonFields; kNumericalFailure if the new factor would not be finite
  // or the new state would fail Validate.
  // On success fills *out (if given) with the predictive innovation computed before the update.
  Status Update(const Sample& s, Innovation* out = nullptr);

  // Coefficients in regressor order (see the header comment). level in (0, 1), else the interval
  // bounds are NaN. Allocates the result vectors.
  ParameterReport Report(double level = 0.95) const;

  // Student-t prediction of a NEW observation at x (weight 1): mean x'm, mean_sd = posterior sd of
  // x'beta, sd = predictive sd, [lower, upper] equal-tailed at `level`. valid = false when x has
  // the wrong length or non-finite entries, the posterior is improper, or level is not in (0, 1).
  Prediction Predict(std::span<const double> x, double level = 0.95) const;

  // Posterior quantities; meaningful only when the posterior is proper (see proper()).
  bool proper() const;               // Lambda full rank and a > 0
  Vector mean() const;               // m
  Matrix precision_inverse() const;  // Lambda^{-1}  (Cov(beta | D) = b / (a - 1) Lambda^{-1})
  double a() const { return state_.a; }
  double b() const;  // F(p,p)^2 / 2
  int p() const { return p_; }

  const Options& options() const { return options_; }
  const State& state() const { return state_; }
  // The state invariants, shared by Restore and Update (an update whose new state fails them is
  // rejected with kNumericalFailure): factor of size p + 1, finite, upper triangular with diagonal
  // >= 0; a finite; effective_n finite >= 0; the log marginal likelihood finite; count a whole
  // number >= 0; last_time not infinite. Ok or kInvalidState.
  Status Validate(const State& s) const;
  // Validate, then replaces the state. On failure: kInvalidState and nothing changes.
  Status Restore(const State& s);

 private:
  Options options_;
  int p_;
  using AugRow = Eigen::Matrix<double, 1, kAug>;
  // Lambda = R'R has full rank: every diagonal of R is a positive fraction of its column's norm.
  static bool FullRank(const AugMatrix& F, int p);

  AugMatrix prior_factor_;  // F0
  double prior_a_;          // a0 (or -p/2 for the flat prior)
  State state_;
  AugMatrix work_;  // scratch for Update (preallocated: no heap use when p is dynamic)
  AugRow row_;
};

}  // namespace bayline::est
