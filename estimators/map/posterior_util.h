// Internal helpers shared by the map estimators (not part of the public API).
#pragma once

#include <Eigen/Core>
#include <cmath>
#include <string>

#include "estimators/core/distributions.h"
#include "estimators/core/status.h"

namespace bayline::est::map_internal {

inline constexpr double kInf = std::numeric_limits<double>::infinity();
// Scores whose tail probability underflows are clamped to +-kMaxScore (see core/distributions.h).
inline constexpr double kMaxScore = dist::kMaxNormalScore;

// Givens-rotates `row` into the upper-triangular F (F'F + row'row is preserved) so that row becomes
// zero; columns before `first` of row must already be zero. Diagonal entries stay >= 0. Square-root
// information update; no allocation.
template <typename FMat, typename RowVec>
void AbsorbRow(FMat& F, RowVec& row, Eigen::Index first = 0) {
  const Eigen::Index n = F.cols();
  for (Eigen::Index k = first; k < n; ++k) {
    const double v = row(k);
    if (v == 0.0) continue;
    const double d = F(k, k);
    // sqrt(d^2 + v^2) where it cannot overflow or underflow (std::hypot costs several times more).
    const double r2 = d * d + v * v;
    const double r = (r2 > 1e-280 && r2 < 1e280) ? std::sqrt(r2) : std::hypot(d, v);
    const double c = d / r, s = v / r;
    F(k, k) = r;
    row(k) = 0.0;
    for (Eigen::Index j = k + 1; j < n; ++j) {
      const double f = F(k, j), g = row(j);
      F(k, j) = c * f + s * g;
      row(j) = c * g - s * f;
    }
  }
}

// Normal score from a tail pair: Phi^{-1}(F) computed from the smaller of F and S = 1 - F.
inline double NormalScoreFromTails(double lower, double upper) {
  if (lower <= upper) return lower > 0 ? dist::NormalQuantile(lower) : -kMaxScore;
  return upper > 0 ? -dist::NormalQuantile(upper) : kMaxScore;
}

// Normal score Phi^{-1}(F_t(t)) of a standard Student-t variate, clamped to +-kMaxScore where its
// tail underflows.
inline double StudentTNormalScore(double t, double nu) {
  return dist::StudentTNormalScoreClamped(t, nu);
}

// The time kept for the next discount: the latest time seen (untimed or out-of-order samples do not
// move it back, so a late sample cannot make the next step over-discount).
inline double LatestTime(double last, double t) {
  if (std::isnan(t)) return last;
  return std::isnan(last) || t > last ? t : last;
}

inline bool LevelOk(double level) { return level > 0.0 && level < 1.0; }

// true when v is an integer to within 1e-9 relative (counts arriving as doubles).
inline bool IsCount(double v) {
  return std::fabs(v - std::round(v)) <= 1e-9 * std::fmax(1.0, std::fabs(v));
}

inline Status Config(const std::string& what) {
  return Status::Error(ErrorCode::kInvalidConfig, what);
}
inline Status BadState(const std::string& what) {
  return Status::Error(ErrorCode::kInvalidState, what);
}
inline Status Domain(const std::string& what) {
  return Status::Error(ErrorCode::kOutOfDomain, what);
}
inline Status Numerical(const std::string& what) {
  return Status::Error(ErrorCode::kNumericalFailure, what);
}

// The rejection of an update whose candidate state fails the estimator's state invariants (the
// check its Restore applies): kNumericalFailure carrying the violation.
inline Status InvalidNext(const Status& violation) {
  return Numerical("update would leave an invalid state: " + violation.message());
}

// Checks the bookkeeping fields every map state carries.
inline Status CheckBookkeeping(double effective_n, double log_marginal, double count,
                               double last_time) {
  if (!(effective_n >= 0) || !std::isfinite(effective_n)) return BadState("effective_n invalid");
  if (!std::isfinite(log_marginal)) return BadState("log marginal likelihood not finite");
  if (!(count >= 0) || !std::isfinite(count) || count != std::floor(count)) {
    return BadState("count invalid");
  }
  if (std::isinf(last_time)) return BadState("last time infinite");
  return Status::Ok();
}

}  // namespace bayline::est::map_internal
