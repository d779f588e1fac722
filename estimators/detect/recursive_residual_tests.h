// Recursive-residual CUSUM and CUSUM-of-squares tests for regression channels (Brown, Durbin &
// Evans 1975, JRSS B 37, "BDE").
//
// Input: the unscaled recursive residuals of a regression with k regressors,
//   w_r = (y_r - x_r' b_{r-1}) / sqrt(1 + x_r' (X_{r-1}' X_{r-1})^{-1} x_r),  r = k+1, ..., n,
// which are iid N(0, sigma^2) while the coefficients are constant. Index them j = r - k = 1..N,
// N = n - k. BDE's statistics over a sample of N residuals:
//   W_j = sum_{i<=j} w_i / sigma_hat,           boundary +/- a (sqrt(N) + 2 j / sqrt(N))
//        (the lines through (k, +/- a sqrt(n-k)) and (n, +/- 3 a sqrt(n-k))),
//        a = 0.850, 0.948, 1.143 for significance 0.10, 0.05, 0.01 (BDE 1975);
//   S_j = sum_{i<=j} w_i^2 / sum_{i<=N} w_i^2,  boundary j / N +/- c0,
//        c0 from the Edgerton & Wells (1994) approximation of Durbin's (1969) table,
//        c0 = c1 / sqrt(m) + c2 / m + c3 / m^1.5 with m = N / 2 - 1.
// sigma_hat: BDE use sigma_hat^2 = sum w_i^2 / N (the regression's residual variance, since the
// w's sum of squares equals the full-sample residual sum of squares); kSampleSd instead uses the
// sample standard deviation of the w's (ddof = 1, centred), which is what the reference library
// of our tests does. Both are offered for the batch path.
//
// Online use (a daemon cannot wait for n). Both detectors test consecutive blocks of `horizon` = N
// residuals, a fresh BDE test per block, so each block has exactly the chosen size:
//   * RecursiveCusum decides at every residual: W_j uses the running
//     sigma_hat_j = sqrt(sum_{i<=j} w_i^2 / j) of the block so far (or a known `sigma` > 0). The
//     running version is self-normalised, |W_j| <= j, so it cannot cross the boundary before
//     j >= a sqrt(N); its size is close to, not exactly, alpha: measured 3.4% of null blocks
//     rejected at alpha = 0.05, N = 100 (unit test InControlRejectionRatePerBlockIsNearAlpha).
//   * RecursiveCusumSquares needs the block's total, so it decides once per block, at j = N, with
//     exactly BDE's S_j; in between events carry statistic = NaN ("no decision yet"). Measured
//     5.4% of null blocks rejected at alpha = 0.05, N = 60.
// At the end of a block without alarm the next residual starts a new block.
//
// Alarm life cycle (alarm.h): raised when the statistic crosses (|W_j| > boundary_j; or
// max_j |S_j - j/N| > c0 at a block end); the current block is then abandoned, the next
// `holdoff` residuals are ignored, and a new block starts. cleared: RecursiveCusum on the first
// residual after the hold-off whose new-block |W_j| is inside the boundary; RecursiveCusumSquares
// at the end of the first new block that does not cross. A crossing while the alarm is active is
// folded into it.
// Onset: CUSUM up-crossing (down-crossing): the observation after the block's running minimum
// (maximum) of sum w_i, or the block's first observation; shift = mean of w since then / sigma_hat
// (sd units). CUSUM of squares: the observation after the j where |S_j - j/N| is largest; shift =
// NaN. Direction: the side crossed, kUp / kDown (for squares kUp when S_j - j/N > 0 at the extreme
// point: the residual variance was larger before it than after).
//
// Thread safety: none. No heap allocation in Update() after construction (RecursiveCusumSquares
// reserves `horizon` entries, and so do its copies).
#pragma once

#include <cstdint>
#include <span>
#include <vector>

#include "estimators/core/state_codec.h"
#include "estimators/core/status.h"
#include "estimators/detect/alarm.h"

namespace bayline::est {

enum class BdeSigma : std::uint8_t { kResidualRms = 0, kSampleSd = 1 };

// BDE's CUSUM coefficient a for significance 0.10, 0.05 or 0.01; NaN for any other alpha.
double BdeCusumCoefficient(double alpha);
// The CUSUM boundary a (sqrt(N) + 2 j / sqrt(N)) at residual j of N (j may be 0..N).
double BdeCusumBoundary(double j, double n_residuals, double a);
// c0 for the CUSUM-of-squares test over N residuals at two-sided significance alpha in
// {0.20, 0.10, 0.05, 0.02, 0.01}; NaN for another alpha or N < 4.
double BdeCusumSquaresCriticalValue(double n_residuals, double alpha);

// Batch paths over all N = w.size() residuals, exactly as defined above. W has N entries
// (W_1..W_N), S has N entries (S_N = 1). Empty input, or N < 2 for W, gives an empty path; an all
// zero input gives NaN entries.
std::vector<double> BdeCusumPath(std::span<const double> w,
                                 BdeSigma sigma = BdeSigma::kResidualRms);
std::vector<double> BdeCusumSquaresPath(std::span<const double> w);

class RecursiveCusum {
 public:
  struct Options {
    int horizon = 100;    // N >= 2 residuals per test block
    double alpha = 0.05;  // 0.10, 0.05 or 0.01
    double sigma = 0.0;   // known residual sd > 0, or 0 to estimate it (running, per block)
    int holdoff = 0;      // >= 0 residuals ignored after a raise
    Status Validate() const;
  };
  struct State {
    double j = 0;       // residuals in the current block
    double sum = 0;     // sum w_i in the block
    double sum_sq = 0;  // sum w_i^2 in the block
    double min_sum = 0, min_j = 0, min_next_seq = -1, min_next_time = 0;  // running minimum
    double max_sum = 0, max_j = 0, max_next_seq = -1, max_next_time = 0;  // running maximum
    bool pending_min = true, pending_max = true;  // next residual is "the one after" the extremum
    bool alarm_active = false;
    double holdoff_left = 0;
    void Pack(StateWriter& w) const;
    Status Unpack(StateReader& r);
  };

  explicit RecursiveCusum(const Options& options);  // precondition: Validate().ok() (asserted)
  // w: one recursive residual (finite; kNonFinite otherwise, nothing changes). kNumericalFailure,
  // nothing changed, when the new state would fail Validate (e.g. an overflowing sum of squares).
  Status Update(double w, const ObservationMark& mark, DetectorEvent* event);
  const Options& options() const { return options_; }
  const State& state() const { return state_; }
  // The state invariants, shared by Restore and Update: 0 <= j < horizon, extremum indices <= j,
  // finite and consistent sums, holdoff_left in [0, holdoff]. Ok or kInvalidState.
  Status Validate(const State& s) const;
  Status Restore(const State& s);  // Validate, then replaces

 private:
  // Update without the invariant check.
  Status Step(double w, const ObservationMark& mark, DetectorEvent* event);

  Options options_;
  double a_;
  State state_;
};

class RecursiveCusumSquares {
 public:
  struct Options {
    int horizon = 100;    // N >= 10 residuals per test block
    double alpha = 0.05;  // 0.20, 0.10, 0.05, 0.02 or 0.01
    int holdoff = 0;
    Status Validate() const;
  };
  struct State {
    double j = 0;
    std::vector<double> cum_sq;  // C_1..C_j of the block (capacity N)
    std::vector<double> seq;     // marks of the block's residuals
    std::vector<double> time;
    bool alarm_active = false;
    double holdoff_left = 0;
    void Pack(StateWriter& w) const;
    Status Unpack(StateReader& r);
  };

  explicit RecursiveCusumSquares(const Options& options);  // precondition: Validate().ok()
  // Copies reserve `horizon` entries like the original; moves keep the storage.
  RecursiveCusumSquares(const RecursiveCusumSquares& other);
  RecursiveCusumSquares& operator=(const RecursiveCusumSquares& other);
  RecursiveCusumSquares(RecursiveCusumSquares&&) noexcept = default;
  RecursiveCusumSquares& operator=(RecursiveCusumSquares&&) noexcept = default;
  // As RecursiveCusum::Update; kNumericalFailure, nothing changed, when a cumulative sum of
  // squares would overflow (a state Restore refuses).
  Status Update(double w, const ObservationMark& mark, DetectorEvent* event);
  double critical_value() const { return c0_; }
  const Options& options() const { return options_; }
  const State& state() const { return state_; }
  Status Restore(const State& s);

 private:
  Options options_;
  double c0_;
  State state_;
};

}  // namespace bayline::est
