// Sample: one observation as the estimators see it (the wire Observation minus routing fields).
//
// Field meanings by model (y is always the response):
//   linear / logistic / poisson_regression : x is the FULL regressor row of length p. An intercept
//   is
//                                            a column of ones that the caller puts in x.
//   gaussian, lognormal, exponential, gamma: y only (y > 0 for lognormal, exponential, gamma).
//   poisson  : y = count >= 0 in `exposure` units of exposure (rate = E[y] / exposure).
//   binomial : y = successes in `trials` trials, 0 <= y <= trials.
//   logistic : y in [0, trials] successes, like binomial, with regressors.
// `weight` (> 0) multiplies the observation's log-likelihood (a frequency or precision weight).
// `time` is in seconds with any origin; only differences matter (time-based forgetting). NaN means
// "untimed": time-based forgetting then falls back to no decay between samples.
#pragma once

#include <cmath>
#include <limits>
#include <span>

#include "estimators/core/status.h"

namespace bayline::est {

struct Sample {
  double y = std::numeric_limits<double>::quiet_NaN();
  std::span<const double> x;
  double trials = 1.0;
  double exposure = 1.0;
  double weight = 1.0;
  double time = std::numeric_limits<double>::quiet_NaN();
};

// Whether the fields every model shares are valid: y, each x, weight, trials, exposure finite;
// weight > 0; x.size() == expected_regressors; time NaN (untimed) or finite, not +-Inf.
inline bool CommonFieldsValid(const Sample& s, std::size_t expected_regressors) {
  if (!std::isfinite(s.y) || s.x.size() != expected_regressors || !std::isfinite(s.weight) ||
      !(s.weight > 0) || !std::isfinite(s.trials) || !std::isfinite(s.exposure) ||
      std::isinf(s.time)) {
    return false;
  }
  for (double v : s.x) {
    if (!std::isfinite(v)) return false;
  }
  return true;
}

// The first of those problems, as an error naming the field and value (Ok when there is none).
Status DescribeCommonFieldsProblem(const Sample& s, std::size_t expected_regressors);

// CommonFieldsValid as a Status: inline, since every update of every estimator calls it and the
// valid case must cost no more than the comparisons.
inline Status CheckCommonFields(const Sample& s, std::size_t expected_regressors) {
  if (CommonFieldsValid(s, expected_regressors)) [[likely]]
    return Status::Ok();
  return DescribeCommonFieldsProblem(s, expected_regressors);
}

}  // namespace bayline::est
