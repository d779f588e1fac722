// Options and per-update extras of recursive least squares (see recursive_least_squares.h for the
// model and the symbols R, z, S, n_eff, lambda used here).
#pragma once

#include <cmath>

#include "estimators/core/forgetting.h"
#include "estimators/core/report.h"
#include "estimators/core/status.h"

namespace bayline::est {

struct RlsOptions {
  // Exponential forgetting, per observation (lambda) or per elapsed time (half_life). Default: off,
  // which makes the estimate the batch OLS estimate of all data seen.
  ForgettingOptions forgetting;

  // Windup protection, used only while forgetting is active (lambda < 1 for the step) and the
  // parameters are identified. At each such step one coordinate j (in rotation) is checked, and if
  // R_jj^2 < windup_floor * T / p (T = discounted trace of R'R) a pseudo-observation a * e_j with
  // response a * theta_j (the current estimate, so theta never moves) lifts it to that floor. See
  // recursive_least_squares.h. In [0, 1); 0 disables. Default 1e-6: unexcited directions keep about
  // 1e-6 of the average information per coordinate.
  double windup_floor = 1e-6;

  // Rank test: column j counts as identified once |R_jj| > rank_tolerance * ||R(:, j)||, i.e. once
  // it is not in the span of columns 0..j-1 to within that relative distance. In (0, 1).
  // Default 1e-10: far above rounding (about 1e-16 * sqrt(n)), below every NIST StRD problem
  // (the smallest ratio, Filip's, is about 5e-8).
  double rank_tolerance = 1e-10;

  // Robust mode: each observation whose standardized innovation u exceeds huber_k in absolute value
  // gets its weight multiplied by huber_k / |u| (Huber 1964, Annals of Mathematical Statistics 35;
  // 1.345 gives 95% efficiency at the normal). Applied only once a predictive exists (identified
  // and n_eff > p); earlier observations are taken at full weight.
  bool robust = false;
  double huber_k = 1.345;

  // Extended precision: R, z and S are held as double-double (about 32 digits) and every rotation
  // is done in double-double. About 5-7 times the cost per update (measured). See UpdateExtended()
  // for regressors that a double cannot hold.
  bool extended_precision = false;

  Status Validate() const {
    Status s = forgetting.Validate();
    if (!s.ok()) return s;
    if (!(windup_floor >= 0.0 && windup_floor < 1.0)) {
      return Status::Error(ErrorCode::kInvalidConfig, "windup_floor must be in [0, 1)");
    }
    if (!(rank_tolerance > 0.0 && rank_tolerance < 1.0)) {
      return Status::Error(ErrorCode::kInvalidConfig, "rank_tolerance must be in (0, 1)");
    }
    if (!(huber_k > 0.0) || !std::isfinite(huber_k)) {
      return Status::Error(ErrorCode::kInvalidConfig, "huber_k must be finite and > 0");
    }
    return Status::Ok();
  }
};

// The Brown-Durbin-Evans recursive residual of an accepted observation, for the recursive CUSUM
// tests:  w_t = sqrt(weight) (y - x'theta_{t-1}) / sqrt(1 + weight x'(R'R)^{-1} x),
// with R the information factor after this step's forgetting (for lambda = 1 and unit weights this
// is exactly BDE's w_r). Under the model w_t ~ N(0, sigma^2), independent across t.
struct RecursiveResidual {
  bool valid = false;   // true when the parameters were identified before this observation
  double value = kNaN;  // w_t (computed from the full weight, before any Huber down-weighting)
  double robust_weight = 1.0;  // Huber factor applied to this observation's weight (1 = none)
  double lambda = 1.0;         // forgetting factor applied at this step
};

}  // namespace bayline::est
