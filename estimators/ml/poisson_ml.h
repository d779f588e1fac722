// PoissonMl: online maximum likelihood for counts y ~ Poisson(rate * exposure).
//
// Model: y_i in {0, 1, 2, ...} events in exposure e_i > 0 (Sample.exposure), rate >= 0 per unit
// exposure. With discounted weights a_i (ml_common.h):
//   Sy = sum a_i y_i,  Se = sum a_i e_i          (state.sum_y, state.sum_exposure)
//   rate = Sy / Se                               ML estimate
//   information I(rate) = Se / rate,  se(rate) = sqrt(rate / Se)
//   log-likelihood = Sy log(rate) - rate Se + K,  K = sum a_i (y_i log e_i - log y_i!)  (state.log_const)
// Counts must be whole numbers: a non-integer y is rejected (kOutOfDomain) rather than silently
// using the continuous extension of the mass function, because it almost always means a unit or
// aggregation mistake upstream.
// identifiable once Sy > 0: with no events the MLE sits on the boundary rate = 0, where the Wald
// interval is degenerate (se = 0), so the report says "not yet" instead.
// Innovation (plug-in): E[y] = rate e, sd[y] = sqrt(rate e), log p(y) = Poisson log-mass.
#pragma once

#include <array>
#include <string_view>

#include "estimators/core/report.h"
#include "estimators/core/sample.h"
#include "estimators/core/state_codec.h"
#include "estimators/ml/ml_common.h"

namespace bayline::est {

class PoissonMl {
 public:
  using Options = MlOptions;
  static constexpr std::array<std::string_view, 1> kParameterNames{"rate"};

  struct State {
    double weight_sum = 0.0;    // W = sum a_i
    double sum_y = 0.0;         // Sy
    double sum_exposure = 0.0;  // Se
    double log_const = 0.0;     // K
    double count = 0.0;         // accepted observations, undiscounted
    double last_time = kNaN;

    void Pack(StateWriter& w) const;
    Status Unpack(StateReader& r);  // kInvalidState on short/long/inconsistent input
    Status Validate() const;        // finite; W, Sy, Se, count >= 0; W = 0 iff count = 0 iff Se = 0
  };

  // Precondition: options.Validate().ok().
  explicit PoissonMl(const Options& options = {}) : options_(options) {}

  // Accepts y a whole number >= 0, exposure > 0, weight > 0, x empty. On rejection the Status names
  // the field (kNonFinite, kOutOfDomain, kInvalidWeight, kWrongRegressorCount) and nothing changes.
  // *out gets the plug-in predictive of the state before the update (invalid while rate = 0).
  Status Update(const Sample& s, Innovation* out = nullptr);

  // value = (rate), Wald interval from the expected information; effective_n = W.
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
