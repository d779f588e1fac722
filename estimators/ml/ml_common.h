// Pieces shared by the online maximum-likelihood estimators (estimators/ml).
//
// Every ml estimator keeps exponentially weighted sufficient statistics. With per-step forgetting
// factor f_t (core/forgetting.h) and sample weight w_t, observation i carries the discounted weight
//   a_i = w_i * prod_{t > i} f_t,
// and the estimator maximises the discounted log-likelihood  l(theta) = sum_i a_i log p(y_i |
// theta). Without forgetting (f = 1) this is the ordinary weighted batch MLE.
//   W  = sum_i a_i      (reported as effective_n)
//   W2 = sum_i a_i^2    (kept where a small-sample correction needs Kish's n_eff = W^2 / W2)
// Standard errors come from the Fisher information of l(theta) evaluated at the estimate, i.e. W
// plays the part of the sample size. With forgetting and a stationary stream this is conservative:
// the sampling variance of a discounted mean is sigma^2 W2 / W^2 = sigma^2 / n_eff, and n_eff > W
// for exponential discounting (about 2 / (1 - lambda) versus 1 / (1 - lambda)).
#pragma once

#include <cmath>
#include <span>
#include <string_view>

#include "estimators/core/forgetting.h"
#include "estimators/core/report.h"
#include "estimators/core/status.h"

namespace bayline::est {

// Options shared by the scalar ml families (gaussian, lognormal, poisson, binomial, exponential,
// gamma). Defaults: no forgetting. Fixed for the life of an estimator (not reloadable: a state
// restored under different forgetting would mean something else).
struct MlOptions {
  ForgettingOptions forgetting;  // default lambda = 1, half_life = 0: batch answer
  Status Validate() const { return forgetting.Validate(); }
};

namespace ml_internal {

// The forgetting factor for a sample at `time`, given the time of the last accepted sample.
inline double StepFactor(const ForgettingOptions& o, double time, double last_time) {
  return ForgettingFactor(o, time, last_time);
}

// The time to remember after accepting a sample at `time`: the latest time seen (untimed samples
// and samples that go back in time leave it alone, so the clock never runs backwards).
inline double NextLastTime(double time, double last_time) {
  if (std::isnan(time)) return last_time;
  if (std::isnan(last_time) || time > last_time) return time;
  return last_time;
}

// True for finite whole numbers (counts are stored in doubles).
inline bool IsWholeNumber(double v) { return std::isfinite(v) && std::floor(v) == v; }

// log(n!) for a whole number n >= 0: a table below 256 (counts are mostly small), LogGamma above.
double LogFactorial(double n);

// z such that a two-sided normal interval +-z*se has coverage `level`; NaN unless 0 < level < 1.
double WaldZ(double level);

// Fills `report` for k parameters: value, std_error and the Wald interval value -+ z * std_error.
// When `identifiable` is false every vector holds k NaN. effective_n and log_likelihood are set by
// the caller. A level outside (0, 1) gives NaN bounds.
void FillWaldReport(std::span<const double> value, std::span<const double> std_error,
                    bool identifiable, double level, ParameterReport* report);

// Sets every field of `out` from a plug-in predictive with mean `mean` and sd `sd` for observation
// `y` and its log density/mass `log_predictive`. valid = true only if all are finite and sd > 0.
void FillInnovation(double y, double mean, double sd, double log_predictive, Innovation* out);

// Ok when y > 0, else kOutOfDomain "<family> y must be > 0, got <y>" (the positive families).
Status CheckPositiveY(std::string_view family, double y);

// Checks the common fields and, for the state validators, that a stored time is NaN or finite.
Status CheckStoredTime(double last_time);

}  // namespace ml_internal
}  // namespace bayline::est
