// Standardizers: turn raw observations into the z (N(0, 1) i.i.d. while in control) that the
// charts watch.
//
// SelfStartingStandardizer (Hawkins 1987): gaussian y with unknown mean and variance. With
// xbar_{n-1} and s_{n-1} the mean and sample sd of y_1..y_{n-1},
//   T_n = (y_n - xbar_{n-1}) / (s_{n-1} sqrt(1 + 1/(n-1)))  ~ t with n - 2 dof,
//   z_n = Phi^{-1}(F_{t, n-2}(T_n))                           ~ N(0, 1),
// and z_3, z_4, ... are independent (each T_n is independent of the past sufficient statistics), so
// a chart fed with them keeps its in-control ARL while the parameters are still being learned.
// y_1 and y_2 give no z.
//
// Regression channels: the recursive residual of least squares without forgetting,
//   w_n = (y_n - x_n' theta_{n-1}) / sqrt(1 + x_n' (X'X)_{n-1}^{-1} x_n)  ~ N(0, sigma^2) i.i.d.,
// is independent of the residual sum of squares of the first n - 1 observations, whose scale
// s_{n-1} = sqrt(RSS_{n-1} / nu) has nu = n - 1 - p dof. So z_n = Phi^{-1}(F_{t, nu}(w_n /
// s_{n-1})) is N(0, 1) i.i.d. (StandardizeRecursiveResidual). Because RSS_{n} = sum of the w_i^2 so
// far, RecursiveResidualStandardizer can keep that scale itself from the w stream alone. Exact
// without forgetting (and without robust down-weighting); with forgetting the t law is an
// approximation.
//
// KnownStandardizer (Phase II): z = (y - mean) / sd with user-given in-control mean and sd.
//
// The t-to-normal transform is dist::StudentTNormalScoreClamped (core/distributions.h): it uses the
// tail on the value's own side, so |z| keeps full relative precision far out in the tails; where
// that tail underflows (|z| > 38.4) z is +-38.5, finite, so a gross outlier feeds the chart instead
// of being skipped. Thread safety: none (one owner per object).
#pragma once

#include "estimators/core/report.h"
#include "estimators/core/state_codec.h"
#include "estimators/core/status.h"

namespace bayline::est {

// z for a recursive residual w given the residual scale of the earlier observations and its dof:
// dist::StudentTNormalScoreClamped(w / scale, dof). NaN when w is not finite, scale <= 0 or not
// finite, dof < 1.
double StandardizeRecursiveResidual(double w, double scale, double dof);

class SelfStartingStandardizer {
 public:
  struct State {
    double count = 0;  // n - 1: observations absorbed
    double mean = 0;   // their mean
    double m2 = 0;     // their sum of squared deviations from the mean (Welford)

    void Pack(StateWriter& w) const;
    // Reads exactly its own values (a caller owning the whole buffer then checks r.status() to
    // refuse trailing values). kInvalidState on a short input or impossible values; *this may then
    // be partly overwritten, so unpack into a temporary (as a restore does).
    Status Unpack(StateReader& r);
  };

  // Absorbs y and returns its z through *z: NaN for the first two observations and while all
  // earlier observations are equal (s_{n-1} = 0). Non-finite y: kNonFinite; moments that would
  // overflow or fail Validate: kNumericalFailure; nothing changes.
  Status Update(double y, double* z);

  void Reset() { state_ = State(); }
  const State& state() const { return state_; }
  // The state invariants, shared by Restore and Update: count an integer >= 0, finite mean, m2
  // finite >= 0. Ok or kInvalidState.
  static Status Validate(const State& s);
  // Validate, then replaces; on error no change.
  Status Restore(const State& s);

 private:
  State state_;
};

class RecursiveResidualStandardizer {
 public:
  struct State {
    double count = 0;   // nu: recursive residuals absorbed
    double sum_sq = 0;  // their sum of squares (= RSS of the regression so far)

    void Pack(StateWriter& w) const;
    // Reads exactly its own values (a caller owning the whole buffer then checks r.status() to
    // refuse trailing values). kInvalidState on a short input or impossible values; *this may then
    // be partly overwritten, so unpack into a temporary (as a restore does).
    Status Unpack(StateReader& r);
  };

  // Feeds the unscaled recursive residual w (NaN while the regression is not yet identified: it is
  // then skipped and *z = NaN). *z = StandardizeRecursiveResidual(w, sqrt(sum_sq/nu), nu), NaN
  // while nu = 0; then w is absorbed. Infinite w: kNonFinite; a sum of squares that would overflow
  // or fail Validate: kNumericalFailure; nothing changes.
  Status Update(double w, double* z);

  void Reset() { state_ = State(); }
  const State& state() const { return state_; }
  // The state invariants, shared by Restore and Update: count an integer >= 0, sum_sq finite >= 0.
  static Status Validate(const State& s);
  // Validate, then replaces; on error no change.
  Status Restore(const State& s);

 private:
  State state_;
};

struct KnownStandardizerOptions {
  double mean = 0.0;  // in-control mean, finite
  double sd = 1.0;    // in-control sd, finite and > 0
  Status Validate() const;
};

// Phase II: z = (y - mean) / sd. Stateless. Precondition: options valid (asserted).
class KnownStandardizer {
 public:
  explicit KnownStandardizer(const KnownStandardizerOptions& options);
  // Not finite for a non-finite y (the charts ignore such a z).
  double Standardize(double y) const { return (y - options_.mean) * inv_sd_; }
  const KnownStandardizerOptions& options() const { return options_; }

 private:
  KnownStandardizerOptions options_;
  double inv_sd_;
};

}  // namespace bayline::est
