// Online maximum likelihood for generalized linear models with a canonical link, by recursive
// Fisher scoring in square-root information form:
//   LogisticRegressionMl : y ~ Binomial(m, p),  logit p = x' theta            (m = Sample.trials)
//   PoissonRegressionMl  : y ~ Poisson(mu),     log mu  = x' theta + log e    (e = Sample.exposure)
// x is the full regressor row of length p (an intercept is a column of ones supplied by the
// caller).
//
// Log-likelihood maximised (a_i discounted weights, ml_common.h; delta = options.prior_precision):
//   l(theta) = sum_i a_i log p(y_i | x_i' theta) - (delta * prod f) / 2 |theta|^2
// The ridge term is a weak Gaussian prior that keeps the information invertible before the data
// identify theta; it is discounted with everything else (state.prior_weight = delta * prod f).
// For a canonical link each observation contributes score a (y - mu) x and expected (= observed)
// information a v x x' with v = Var[y | eta] (m p (1 - p), resp. mu).
//
// Start-up. Accepted observations are first kept in a buffer (state.startup). From the N0-th
// (N0 = options.StartupRows()) on, each new row triggers a batch fit over the buffer: penalised
// Fisher scoring (iteratively reweighted least squares with step halving) to the maximiser of l.
// The recursion starts from that fit as soon as it is well determined, i.e. the information at
// the fit passes the identifiability test below; while the buffered rows are (quasi-)separated
// (e.g. a rare-event logistic channel that has seen no event yet) it is not, and buffering goes
// on, up to the capacity 4 N0 (options.StartupCapacity()), where the recursion starts regardless.
// The buffer is released when the recursion starts. Starting the recursion from theta = 0 instead
// would accumulate information evaluated far from the estimate: for the Poisson model large early
// counts make mu overshoot by orders of magnitude and that inflated information never leaves R.
// Until the recursion starts the report is not identifiable and innovations are invalid; after a
// forced start, innovations stay invalid until the information first passes the identifiability
// test (state.determined), so detectors never see predictions from a separated fit.
//
// Recursion (after start-up), one O(p^2) step per observation with forgetting factor f:
//   R <- sqrt(f) R;  eta = x' theta_old;  append the row sqrt(a v) x' to R and restore triangular
//   form with Givens rotations (R' R is the information I);  g = a (y - mu) x;
//   theta <- theta_old + t I^{-1} g   (two triangular solves; t = 1 but for the safeguard below).
// This is one Fisher-scoring step per observation on the sum of per-observation quadratic
// expansions, each taken around the estimate current when the observation arrived. It differs
// from the batch MLE by the linearisation error of those expansions, O(log n / n) (versus
// standard errors O(n^{-1/2})); tests/reference/ml checks it against a batch GLM fit at n = 1e5.
// Safeguard (damped step): a step that would move this row's linear predictor by more than
// kMaxEtaStep (= 1, a factor e in the odds or the mean) is shortened to that length (factor t).
// In a well-determined steady state a step moves x' theta by about leverage * (y - mu) / v, far
// below 1, so the cap binds only in transients (the rows after a forced start, gross outliers),
// where it bounds one row's influence; the part of the step cut off is dropped. (Carrying it over
// to later rows was tried: after a forced start it overshoots into regions where the information
// then absorbed is far too large, which is worse.)
// state.log_likelihood tracks the value of that surrogate at theta,
//   L <- f L + a log p(y | theta_old) + (t - t^2 / 2) g' I^{-1} g,
// (with full steps, its maximum), which approximates the log-likelihood at the estimate to the
// same order.
// Limitation: information, once absorbed, is never re-evaluated; a gross outlier inside the
// start-up window (a count of thousands where the rate is 2) leaves the information evaluated at a
// far too large mean and the estimate then recovers only slowly (forgetting shortens this). For
// rare events the start-up fit rests on very few events and the recursion-vs-batch gap is wider
// (about 0.2 se at 900 events in tests/unit/estimators/ml) than in the common case (< 0.05 se).
// Standard errors: sqrt(diag(I^{-1})) from R (prior included; its share is negligible once
// identifiable). identifiable = start-up done and trace(I^{-1}) < 1 / (1000 * state.prior_weight);
// as trace(I^{-1}) >= 1 / lambda_min(I), this implies lambda_min(I) > 1000 * prior_weight: the
// data, not the prior, determine theta in every direction (a test that needs no eigen-solver and
// no allocation, so the start-up can apply it on the update path).
//
// Storage: theta, R, scratch and the start-up buffer ((p + 3) x 4 N0 doubles) are allocated at
// construction; Update allocates nothing (it frees the buffer once; Restore and Report allocate).
#pragma once

#include <Eigen/Core>
#include <cstddef>
#include <string_view>

#include "estimators/core/forgetting.h"
#include "estimators/core/report.h"
#include "estimators/core/sample.h"
#include "estimators/core/state_codec.h"

namespace bayline::est {

struct GlmMlOptions {
  static constexpr std::size_t kMaxRegressors = 64;
  static constexpr std::size_t kMaxStartupRows = 100000;

  std::size_t num_regressors = 1;        // p, 1..kMaxRegressors
  ForgettingOptions forgetting;          // default: none (batch-like answer)
  double prior_precision = 1e-8;         // delta > 0 finite: ridge keeping I invertible at start
  std::size_t startup_observations = 0;  // N0; 0 = automatic max(20, 10 p); else p..kMaxStartupRows
  static constexpr std::size_t kStartupCapacityFactor = 4;
  static constexpr double kMaxEtaStep = 1.0;  // cap on one row's change of its linear predictor

  Status Validate() const;
  std::size_t StartupRows() const;      // the N0 in use
  std::size_t StartupCapacity() const;  // kStartupCapacityFactor * N0
};

// Link/variance family of a canonical GLM (defined in glm_ml.cc).
struct LogitFamily;
struct PoissonLogFamily;

template <typename Family>
class GlmMl {
 public:
  using Options = GlmMlOptions;

  struct State {
    Eigen::VectorXd theta;        // p: current estimate
    Eigen::MatrixXd r;            // p x p upper triangular, R'R = information (prior included)
    double prior_weight = 0.0;    // delta * prod f: the prior's share of R'R
    double log_likelihood = 0.0;  // surrogate log-likelihood at theta (data part only)
    double weight_sum = 0.0;      // W = sum a_i
    double count = 0.0;           // accepted observations, undiscounted
    double last_time = kNaN;
    bool started = false;       // start-up fit done; the recursion is running
    bool determined = false;    // the information has passed the identifiability test (stays set)
    double startup_rows = 0.0;  // columns of `startup` in use
    Eigen::MatrixXd startup;    // (p + 3) x capacity before the start, (p + 3) x 0 after;
                                // column j = [x_j; y_j; trials or exposure; a_j]

    // Pack writes p and the buffer capacity first, then the fields; only the used start-up columns
    // are written.
    void Pack(StateWriter& w) const;
    // Sizes itself from the stored p and N0; kInvalidState on short, long or inconsistent input.
    Status Unpack(StateReader& r);
    // Sizes agree; values finite; R upper triangular with positive diagonal; counts consistent;
    // the buffer is empty (0 columns) once started.
    Status Validate() const;
  };

  // Precondition: options.Validate().ok(). theta starts at 0, R at sqrt(delta) I.
  explicit GlmMl(const Options& options);

  // Absorbs one observation. Rejected (nothing changes; Status names the field): non-finite fields,
  // x.size() != p, weight <= 0, and per family: logistic: trials not a whole number >= 1 or y not a
  // whole number in [0, trials]; poisson: y not a whole number >= 0 or exposure <= 0. A step whose
  // result is not finite is rejected with kNumericalFailure. On success *out (if not null) gets
  // the plug-in predictive under theta before the update (invalid during start-up).
  Status Update(const Sample& s, Innovation* out = nullptr);

  // value = theta with standard errors from I^{-1} and Wald intervals; effective_n = W;
  // log_likelihood = state.log_likelihood (NaN during start-up).
  ParameterReport Report(double level = 0.95) const;

  std::size_t num_regressors() const { return p_; }
  const Options& options() const { return options_; }
  const State& state() const { return state_; }
  // Validates (including sizes against the options) and replaces; on rejection nothing changes.
  Status Restore(const State& state);

 private:
  Status CheckDomain(const Sample& s) const;
  // Batch penalised Fisher scoring over the buffered columns (old ones scaled by old_scale) into
  // scratch_theta_, scratch_r_, scratch_ll_. Returns false if it does not produce finite values.
  bool FitStartup(std::size_t columns, double old_scale, double prior_weight);
  // trace((R'R)^{-1}) * prior_weight < 1e-3, with `work` (p x p) as workspace.
  static bool WellDetermined(const Eigen::MatrixXd& r, double prior_weight, Eigen::MatrixXd& work);

  Options options_;
  std::size_t p_;
  State state_;
  // Preallocated scratch (not state).
  Eigen::VectorXd scratch_theta_, scratch_trial_, scratch_grad_, scratch_step_, scratch_row_;
  Eigen::MatrixXd scratch_r_;
  Eigen::MatrixXd scratch_inv_;
  double scratch_ll_ = 0.0;
};

using LogisticRegressionMl = GlmMl<LogitFamily>;
using PoissonRegressionMl = GlmMl<PoissonLogFamily>;

}  // namespace bayline::est
