// GammaMl: online maximum likelihood for y ~ Gamma(shape k, rate r), y > 0, E[y] = k / r.
//
// Sufficient statistics, with discounted weights a_i (ml_common.h) and a reference value c (the
// first accepted y, state.ref) that takes the common magnitude out of the sums:
//   W = sum a_i,  d = sum a_i (y_i / c - 1) / W,  l = sum a_i log(y_i / c) / W,
// both kept by the Welford-style mean recursion m' = m + (w / W') (v - m). Then
//   ybar = c (1 + d),   s = log(ybar) - mean(log y) = log1p(d) - l   (>= 0 by Jensen)
// and the MLE solves log k - psi(k) = s (gamma_shape.h, Newton warm-started from the previous k),
// r = k / ybar. The shift by c keeps s accurate when the data are large and tightly clustered (s is
// a small difference of two nearly equal logarithms otherwise).
// Fisher information for (k, r): W [[psi'(k), -1/r], [-1/r, k/r^2]], whose inverse gives
//   var(k) = k / (W (k psi'(k) - 1)),   var(r) = psi'(k) r^2 / (W (k psi'(k) - 1)).
// Log-likelihood at the estimate: W [k log r + (k - 1) mean(log y) - k - log Gamma(k)].
// identifiable once s > 0 (two distinct values); state.shape caches the root (NaN before).
// Innovation (plug-in): E[y] = k / r, sd[y] = sqrt(k) / r, log p(y) = gamma log-density.
#pragma once

#include <array>
#include <string_view>

#include "estimators/core/report.h"
#include "estimators/core/sample.h"
#include "estimators/core/state_codec.h"
#include "estimators/ml/ml_common.h"

namespace bayline::est {

class GammaMl {
 public:
  using Options = MlOptions;
  static constexpr std::array<std::string_view, 2> kParameterNames{"shape", "rate"};

  struct State {
    double weight_sum = 0.0;  // W
    double ref = 0.0;         // c: first accepted y (0 before data)
    double mean_d = 0.0;      // d: weighted mean of y / c - 1
    double mean_log = 0.0;    // l: weighted mean of log(y / c)
    double shape = kNaN;      // cached MLE of k; NaN while not identifiable
    double count = 0.0;       // accepted observations, undiscounted
    double last_time = kNaN;

    void Pack(StateWriter& w) const;
    Status Unpack(StateReader& r);  // kInvalidState on short/long/inconsistent input
    // Finite sums; W >= 0; c > 0 iff count > 0; 1 + d > 0; shape NaN or > 0.
    Status Validate() const;
  };

  // Precondition: options.Validate().ok().
  explicit GammaMl(const Options& options = {}) : options_(options) {}

  // Accepts y > 0 (kOutOfDomain otherwise), weight > 0, x empty. Solves for the new shape; if that
  // fails to give a finite result the update is rejected (kNumericalFailure). Rejection changes
  // nothing. *out: plug-in predictive of the state before the update.
  Status Update(const Sample& s, Innovation* out = nullptr);

  // value = (shape, rate), Wald intervals; effective_n = W.
  ParameterReport Report(double level = 0.95) const;

  double shape() const { return state_.shape; }
  double rate() const;        // NaN while not identifiable
  double mean() const;        // ybar; NaN before data
  double log_likelihood() const;

  const Options& options() const { return options_; }
  const State& state() const { return state_; }
  Status Restore(const State& state);

 private:
  Options options_;
  State state_;
};

}  // namespace bayline::est
