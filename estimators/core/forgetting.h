// Forgetting: how much weight past data keep when a new observation arrives.
//
// Exponential forgetting multiplies all past information by a factor lambda in (0, 1] at each new
// observation, so an observation k steps old has weight lambda^k and the effective memory is about
// 1 / (1 - lambda) observations. Two ways to choose lambda:
//   * per observation: lambda fixed (1 = no forgetting: the estimators then give the batch answer);
//   * per elapsed time: lambda = 2^(-dt / half_life), dt = seconds since the previous observation,
//     so irregularly sampled channels forget by the clock rather than by count. An untimed sample
//     (time NaN) or a time that did not advance gives lambda = 1 for that step.
#pragma once

#include <cmath>

#include "estimators/core/status.h"

namespace bayline::est {

struct ForgettingOptions {
  double lambda = 1.0;     // per-observation factor in (0, 1]; used when half_life is 0
  double half_life = 0.0;  // seconds; > 0 switches to time-based forgetting

  Status Validate() const {
    if (!(lambda > 0.0 && lambda <= 1.0)) {
      return Status::Error(ErrorCode::kInvalidConfig, "forgetting factor must be in (0, 1]");
    }
    if (!(half_life >= 0.0) || std::isinf(half_life)) {
      return Status::Error(ErrorCode::kInvalidConfig, "half-life must be finite and >= 0 seconds");
    }
    return Status::Ok();
  }
  bool enabled() const { return half_life > 0.0 || lambda < 1.0; }
};

// The factor for a sample at `time` given the time of the previous accepted sample (NaN if none).
inline double ForgettingFactor(const ForgettingOptions& o, double time, double previous_time) {
  if (o.half_life > 0.0) {
    if (std::isnan(time) || std::isnan(previous_time) || !(time > previous_time)) return 1.0;
    return std::exp2(-(time - previous_time) / o.half_life);
  }
  return o.lambda;
}

}  // namespace bayline::est
