// Sample: one observation as the estimators see it (the wire Observation minus routing fields).
//
// Field meanings by model (y is always the response):
//   linear / logistic / poisson_regression : x is the FULL regressor row of length p. An intercept is
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

// Checks the fields every model shares: y, each x, weight, trials, exposure finite; weight > 0;
// x.size() == expected_regressors. Returns the first problem found. Time may be NaN (untimed), not
// +-Inf.
Status CheckCommonFields(const Sample& s, std::size_t expected_regressors);

}  // namespace bayline::est
