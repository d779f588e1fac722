// ExponentialMl: online maximum likelihood for y ~ Exponential(rate), y > 0, E[y] = 1 / rate.
//
// With discounted weights a_i (ml_common.h) the sufficient statistics are W = sum a_i and the
// weighted mean ybar = sum a_i y_i / W, kept by the Welford-style mean recursion
//   W' = f W + w,  ybar' = ybar + (w / W') (y - ybar).
//   rate = 1 / ybar                      ML estimate
//   information I(rate) = W / rate^2,  se(rate) = rate / sqrt(W)
//   log-likelihood = W (log rate - rate ybar) = W (log rate - 1)
// identifiable after the first observation (y > 0 makes ybar > 0).
// Innovation (plug-in): E[y] = sd[y] = 1 / rate, log p(y) = log rate - rate y.
#pragma once

#include <array>
#include <string_view>

#include "estimators/core/report.h"
#include "estimators/core/sample.h"
#include "estimators/core/state_codec.h"
#include "estimators/ml/ml_common.h"

namespace bayline::est {

class ExponentialMl {
 public:
  using Options = MlOptions;
  static constexpr std::array<std::string_view, 1> kParameterNames{"rate"};

  struct State {
    double weight_sum = 0.0;  // W
    double mean = 0.0;        // ybar
    double count = 0.0;       // accepted observations, undiscounted
    double last_time = kNaN;

    void Pack(StateWriter& w) const;
    Status Unpack(StateReader& r);  // kInvalidState on short/long/inconsistent input
    Status Validate() const;        // finite; W >= 0; ybar > 0 iff count > 0
  };

  // Precondition: options.Validate().ok().
  explicit ExponentialMl(const Options& options = {}) : options_(options) {}

  // Accepts y > 0 (kOutOfDomain otherwise), weight > 0, x empty; rejection changes nothing.
  Status Update(const Sample& s, Innovation* out = nullptr);

  // value = (rate), Wald interval; effective_n = W.
  ParameterReport Report(double level = 0.95) const;

  double rate() const;  // NaN before data
  double log_likelihood() const;

  const Options& options() const { return options_; }
  const State& state() const { return state_; }
  Status Restore(const State& state);

 private:
  Options options_;
  State state_;
};

}  // namespace bayline::est
