// Recursive least squares in square-root information form.
//
// Model: y_t = x_t' theta + e_t,  e_t ~ N(0, sigma^2 / w_t),  x_t, theta in R^p, w_t =
// Sample::weight.
//
// With forgetting factors lambda_t in (0, 1] (core/forgetting.h) the estimate minimises
//     S(theta) = sum_t  w_t * lambda_{t+1} ... lambda_n * (y_t - x_t' theta)^2 .
// State (symbols used in the code):
//   R      p x p upper triangular with R'R = sum_t (discounted) w_t x_t x_t'  (the information
//   factor), z      p-vector with R theta = z, S      the discounted weighted residual sum of
//   squares at theta, n_eff  sum_t (discounted) w_t, the effective sample size; dof = n_eff - p.
// Weights count as frequency weights in n_eff and dof (a weight-3 row is three identical rows);
// callers with precision weights should scale them to average about 1.
// Each observation row sqrt(w) [x', y] is annihilated into [R z] by p Givens rotations (O(p^2), no
// allocation). The last entry left in the row is the recursive residual
//     eta = sqrt(w) (y - x'theta_prev) / sqrt(1 + w x'(R'R)^{-1} x),   S <- S + eta^2,
// and the product of the rotation cosines is 1 / sqrt(1 + w x'(R'R)^{-1} x), so the innovation and
// its variance come out of the rotations without a triangular solve.
// Forgetting multiplies R and z by sqrt(lambda) and S, n_eff by lambda before the row is absorbed.
//
// Exact start: R starts at zero (no P0 = delta I prior). Until every column passes the rank test
// (RlsOptions::rank_tolerance) the estimator reports identifiable = false and NaN values; from then
// on, without forgetting, theta = R^{-1} z is the batch OLS estimate to rounding.
//
// Outputs (dof = n_eff - p, s^2 = S / dof):
//   coefficients theta = R^{-1} z; covariance s^2 (R'R)^{-1}; standard errors; t intervals with dof
//   degrees of freedom; one-step predictions; innovations (core/report.h) and recursive residuals.
//
// Windup: with lambda < 1 and regressors that stop exciting a direction, R'R in that direction
// decays like lambda^t and the covariance blows up. The remedy used here (RlsOptions::windup_floor,
// rho) is stabilised forgetting anchored at the current estimate, one coordinate per step in
// rotation: at each forgetting step, for j = 0, 1, ..., p-1, 0, ... in turn, if
//     R_jj^2 < iota = rho * max(T, rho * T_id) / p
// (R_jj^2 is the information on theta_j given theta_0..theta_{j-1}), a pseudo-row a e_j' with
// response a theta_j and a^2 = iota - R_jj^2 is annihilated into [R z], which lifts R_jj^2 to iota.
// T is the discounted trace of R'R (tracked incrementally, so T >= lambda_max(R'R)) and T_id its
// value when the parameters were first identified. The pseudo-row's residual is zero, so theta and
// S do not move. Every R_jj^2 then stays above about lambda^p iota, hence
//     lambda_min(R'R) >= det(R'R) / lambda_max^{p-1} = prod_j R_jj^2 / lambda_max^{p-1} > 0:
// R'R stays positive definite and bounded (its trace is at most T), even if the regressors stop
// altogether (iota >= rho^2 T_id / p). While every direction is excited no anchor is applied, so
// the estimate is the discounted least-squares one and the cost is one comparison; an anchor costs
// a partial back substitution and <= p - j rotations.
//
// Conditioning: ConditionNumber() is the 1-norm condition number of R with its columns scaled to
// unit norm (rotation-based least squares is invariant to column scaling, so this is the relevant
// one). The first-order bound on the relative error of theta (Golub & Van Loan, least-squares
// sensitivity) is  u * (kappa + kappa^2 tan(phi)),  tan(phi) = sqrt(S) / ||z|| (residual size
// against fit size), u = 2^-53 (double) or 2^-104 (extended). ill_conditioned() is true when kappa
// + kappa^2 tan(phi) > 1e13 (double) or 1e29 (extended), i.e. when fewer than about three digits of
// theta are guaranteed. NIST Filip is flagged in double mode; Longley and Wampler1-5 are not.
//
// Robust mode (RlsOptions::robust): the row's weight is multiplied by h = min(1, k / |u|), u the
// standardized innovation (Huber 1964), before it is absorbed; Innovation and RecursiveResidual
// still describe the observation as it arrived.
//
// Extended precision (RlsOptions::extended_precision): R, z, S in double-double, every rotation in
// double-double (measured 5-7x the double cost per update). Rows given as doubles are taken as
// exact; when they are themselves rounded (x^k of a polynomial basis), the rounding bounds the
// accuracy whatever the arithmetic (NIST Filip: LRE about 7.6 at best from double-rounded rows, by
// 60-digit computation), so UpdateExtended() accepts the rows' low-order parts.
//
// Thread safety: none; one owner (a daemon worker) per object. Copyable.
#pragma once

#include <Eigen/Core>
#include <cstddef>
#include <span>
#include <type_traits>

#include "estimators/core/report.h"
#include "estimators/core/sample.h"
#include "estimators/core/state_codec.h"
#include "estimators/core/status.h"
#include "estimators/ls/rls_options.h"

namespace bayline::est {

// A caller's check of a candidate innovation, run by Update before it commits (see Update).
struct InnovationCheck {
  Status (*check)(void* context, const Innovation& innovation) = nullptr;
  void* context = nullptr;
};

// P: parameter count known at compile time (fixed-size Eigen storage), or Eigen::Dynamic with p
// given at construction (storage allocated once, at construction).
template <int P>
class RecursiveLeastSquares {
 public:
  using Vector = Eigen::Matrix<double, P, 1>;
  using Matrix = Eigen::Matrix<double, P, P>;
  using RowVector = Eigen::Matrix<double, (P == Eigen::Dynamic ? Eigen::Dynamic : P + 1), 1>;

  // Everything that evolves. Packs to doubles in this order: p, extended, R (column-major, full
  // p x p), z, S, [R_lo, z_lo, S_lo when extended], n_eff, n_obs, previous_time, trace,
  // trace_identified, anchor, identified.
  struct State {
    int p = (P == Eigen::Dynamic ? 0 : P);
    bool extended = false;
    Matrix r;              // R (upper triangular; strictly lower part exactly 0)
    Vector z;              // z
    double rss = 0.0;      // S
    Eigen::MatrixXd r_lo;  // low parts of R, z, S in extended mode (empty otherwise)
    Eigen::VectorXd z_lo;
    double rss_lo = 0.0;
    double n_eff = 0.0;           // discounted sum of weights
    double n_obs = 0.0;           // accepted observations (not discounted)
    double previous_time = kNaN;  // latest finite Sample::time accepted (NaN if none)
    double trace = 0.0;  // T: discounted trace of R'R (excluding round-off), for the windup floor
    double trace_identified = 0.0;  // T_id
    double anchor = 0.0;            // next coordinate j of the windup pseudo-row, in [0, p)
    bool identified = false;

    void Pack(StateWriter& w) const;
    // Reads a state written by Pack. Fails (kInvalidState, *this unchanged) on a truncated input or
    // a p that this P cannot hold. Reads exactly its own values (so states can be nested): a caller
    // that owns the whole buffer checks r.status() afterwards to refuse trailing values. Range
    // checks are done by Restore().
    Status Unpack(StateReader& r);
  };

  // p must equal P when P is fixed; for Eigen::Dynamic, p >= 1. Options must be valid (assert);
  // call options.Validate() first on anything from outside.
  explicit RecursiveLeastSquares(const RlsOptions& options = {},
                                 int p = (P == Eigen::Dynamic ? 1 : P));

  // Absorbs one observation: s.x has p entries, s.weight > 0, everything finite.
  // On success: the state advances; *out (if given) holds the one-step innovation computed from the
  // state before this observation (valid once identified with dof > 0; its log_predictive is the
  // Student t density with the previous dof), *rr (if given) the recursive residual.
  // On rejection: kNonFinite / kWrongRegressorCount / kInvalidWeight for bad input,
  // kNumericalFailure if the result would overflow or the new state would fail Validate (the one
  // check Restore applies, so every state an update leaves can be restored); the state, *out and
  // *rr are unchanged.
  Status Update(const Sample& s, Innovation* out = nullptr, RecursiveResidual* rr = nullptr);
  // As Update, and `check` sees the innovation before anything is committed: an error it returns
  // rejects the observation (returned as is; nothing changes). How an estimator built on this one
  // applies its own invariants to what it derives from the innovation.
  Status Update(const Sample& s, Innovation* out, RecursiveResidual* rr,
                const InnovationCheck& check);

  // As Update, for regressors/response known to more digits than a double holds: the row absorbed
  // is x + x_lo, y + y_lo (e.g. x^k of a polynomial basis computed in double-double). Requires the
  // extended_precision option (else kInvalidConfig); x_lo must have p finite entries.
  Status UpdateExtended(const Sample& s, std::span<const double> x_lo, double y_lo,
                        Innovation* out = nullptr, RecursiveResidual* rr = nullptr);

  // Coefficients with t intervals at `level` in (0, 1) (NaN intervals for a level outside it).
  // identifiable = false (and NaN vectors) until identified; std_error and intervals NaN while
  // dof <= 0. log_likelihood: the weighted gaussian log-likelihood at (theta, S / n_eff).
  ParameterReport Report(double level = 0.95) const;

  // Prediction for a new observation at x (weight 1): mean x'theta, mean_sd = s
  // sqrt(x'(R'R)^{-1}x), sd = s sqrt(1 + x'(R'R)^{-1} x), t interval with dof degrees of freedom.
  // Rejects a wrong-size or non-finite x (out unchanged); otherwise out->valid says whether
  // identified with dof > 0.
  Status Predict(std::span<const double> x, double level, Prediction* out) const;

  // Multiplies the covariance by factor > 1 (R and z divided by sqrt(factor); theta, S and n_eff
  // unchanged) so the estimate re-converges quickly after a detected change. Rejects factor <= 1 or
  // non-finite with kInvalidConfig, changing nothing.
  Status InflateUncertainty(double factor);

  // Forgets everything: back to the state right after construction (options kept).
  void Reset();

  // Accessors. Values are NaN where not defined (not identified, or dof <= 0 for variances).
  int p() const { return state_.p; }
  bool identifiable() const { return state_.identified; }
  Vector coefficients() const;       // theta
  Matrix covariance() const;         // s^2 (R'R)^{-1}
  double residual_variance() const;  // s^2 = S / dof
  double dof() const { return state_.n_eff - p(); }
  double effective_n() const { return state_.n_eff; }
  double rss() const { return state_.rss + state_.rss_lo; }
  const Matrix& information_factor() const { return state_.r; }  // R (hi part in extended mode)

  // Condition estimates (O(p^3), on demand; NaN when not identified). See the header comment.
  double ConditionNumber() const;
  double ErrorSensitivity() const;  // kappa + kappa^2 tan(phi)
  bool ill_conditioned() const;

  const RlsOptions& options() const { return options_; }
  const State& state() const { return state_; }
  // The state invariants, shared by Restore and Update: p and the extended flag match this
  // estimator, R is upper triangular with a non-negative diagonal, R, z, S (and their low parts)
  // finite, S >= 0, n_eff finite >= 0, n_obs a whole number >= 0, previous_time not infinite, the
  // traces T and T_id finite >= 0 (the windup floor is computed from them), anchor an index in [0,
  // p), identified consistent with the rank test (and then R's diagonal > 0, so theta = R^{-1} z
  // exists). Ok or kInvalidState naming the first violation.
  Status Validate(const State& s) const;
  // Validate, then replaces the state. On failure kInvalidState, nothing changes.
  Status Restore(const State& s);

 private:
  // Work space of one update: on the stack for fixed P, preallocated members for Eigen::Dynamic.
  struct Work {
    Matrix r, r_lo;
    Vector z, z_lo;
    RowVector row, row_lo;
  };
  struct NoWork {};
  static constexpr bool kDynamic = (P == Eigen::Dynamic);

  Status UpdateChecked(const Sample& s, const double* x_lo, double y_lo, Innovation* out,
                       RecursiveResidual* rr, const InnovationCheck* check);
  template <typename Real>
  Status UpdateImpl(Work& w, const Sample& s, const double* x_lo, double y_lo, Innovation* out,
                    RecursiveResidual* rr, const InnovationCheck* check);
  void SizeWork(Work& w) const;
  bool RankTest(const Matrix& r) const;
  // theta and R^{-1} in the working precision, rounded to double. Require identified.
  Vector SolveTheta() const;
  Matrix InverseR() const;

  RlsOptions options_;
  State state_;
  double sqrt_lambda_ = 1.0;  // cached sqrt of the per-observation lambda
  [[no_unique_address]] std::conditional_t<kDynamic, Work, NoWork> dyn_work_;
};

// Instantiated in recursive_least_squares.cc.
extern template class RecursiveLeastSquares<1>;
extern template class RecursiveLeastSquares<2>;
extern template class RecursiveLeastSquares<3>;
extern template class RecursiveLeastSquares<4>;
extern template class RecursiveLeastSquares<8>;
extern template class RecursiveLeastSquares<Eigen::Dynamic>;

}  // namespace bayline::est
