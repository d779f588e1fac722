// GaussianMl: online maximum likelihood for y ~ N(mean, variance).
//
// Model and estimator (symbols as in the code; a_i discounted weights, see ml_common.h):
//   W     = sum_i a_i                          (state.weight_sum)
//   W2    = sum_i a_i^2                        (state.weight_sq_sum)
//   c     = the first accepted y               (state.shift)
//   m     = sum_i a_i (y_i - c) / W            (state.mean_shifted)
//   mean  = c + m                                               ML estimate of the mean
//   M2    = sum_i a_i (y_i - mean)^2           (state.m2)
//   variance_ml       = M2 / W                                  ML estimate of the variance
//   variance_unbiased = M2 / (W - W2 / W) = variance_ml * n_eff / (n_eff - 1),  n_eff = W^2 / W2.
// The unbiased form treats the a_i as reliability weights (Kish's effective sample size): it is
// exactly unbiased for independent data with any fixed weights, so it covers exponential forgetting
// and precision weights; with unit weights and no forgetting it is the usual M2 / (n - 1). (For
// integer frequency weights the unbiased divisor would be W - 1 instead; we do not guess the intent.)
// Updates are the weighted Welford recursion with forgetting f, on the shifted value u = y - c:
//   W' = f W + w,  d = u - m,  m' = m + (w / W') d,  M2' = f M2 + w d (u - m'),
// which never forms raw sums of squares. The shift matters for data far from zero relative to their
// spread: y - c is exact for values within a factor two of c, so the recursion then works on small
// numbers and the variance keeps full relative precision (plain Welford loses about
// log10(|mean| / sd) digits; with c it is limited only by how the data themselves are represented).
// Fisher information (per unit of W): 1 / variance for the mean, 1 / (2 variance^2) for the
// variance, so se(mean) = sqrt(variance_ml / W) and se(variance) = variance_ml sqrt(2 / W).
// Log-likelihood at the estimate: -W/2 (log(2 pi variance_ml) + 1).
//
// Thread safety: none; one owner per object (the daemon's worker for the channel).
#pragma once

#include <array>
#include <string_view>

#include "estimators/core/report.h"
#include "estimators/core/sample.h"
#include "estimators/core/state_codec.h"
#include "estimators/ml/ml_common.h"

namespace bayline::est {

class GaussianMl {
 public:
  using Options = MlOptions;
  static constexpr std::array<std::string_view, 2> kParameterNames{"mean", "variance"};

  struct State {
    double weight_sum = 0.0;     // W
    double weight_sq_sum = 0.0;  // W2
    double shift = 0.0;          // c: first accepted y (0 before data)
    double mean_shifted = 0.0;   // m: weighted mean of y - c
    double m2 = 0.0;             // discounted weighted sum of squared deviations from mean
    double count = 0.0;          // accepted observations, undiscounted
    double last_time = kNaN;     // time of the latest accepted timed sample

    void Pack(StateWriter& w) const;
    // Reads the fields in Pack order; kInvalidState if the input is short, too long or the values are
    // inconsistent (see Validate). On failure *this is unspecified; Restore() is the safe path.
    Status Unpack(StateReader& r);
    // Finite, W >= 0, W2 >= 0, M2 >= 0, count >= 0, W2 <= W^2 (up to rounding), W = 0 iff count = 0,
    // no moments or shift without data.
    Status Validate() const;
  };

  // Precondition: options.Validate().ok() (checked at configuration time by the caller).
  explicit GaussianMl(const Options& options = {});

  // Absorbs one observation (y finite; x empty; weight > 0 finite). On success fills *out (if not
  // null) with the plug-in predictive N(mean, variance_ml) of the state BEFORE the update (invalid
  // until two distinct values were seen). On rejection returns the Status naming the field and
  // nothing changes (state and *out untouched).
  Status Update(const Sample& s, Innovation* out = nullptr);

  // value = (mean, variance_ml) with Fisher-information standard errors and Wald intervals at
  // `level`. identifiable once M2 > 0 (two distinct values). effective_n = W.
  ParameterReport Report(double level = 0.95) const;

  double mean() const { return state_.shift + state_.mean_shifted; }
  // NaN before any data.
  double variance_ml() const;
  // NaN until n_eff > 1.
  double variance_unbiased() const;
  // Kish's n_eff = W^2 / W2 (0 before any data).
  double effective_sample_size() const;
  double log_likelihood() const;

  const Options& options() const { return options_; }
  const State& state() const { return state_; }
  // Validates `state` and replaces the current one; on rejection nothing changes.
  Status Restore(const State& state);

 private:
  Options options_;
  State state_;
};

}  // namespace bayline::est
