// BinomialMl: online maximum likelihood for y ~ Binomial(trials, probability).
//
// Model: y_i successes in n_i trials (Sample.trials, a whole number >= 1), 0 <= y_i <= n_i, both
// whole numbers (non-integers are rejected, kOutOfDomain: proportions must be sent as counts).
// With discounted weights a_i (ml_common.h):
//   Sy = sum a_i y_i,  Sn = sum a_i n_i              (state.sum_y, state.sum_trials)
//   probability = Sy / Sn                            ML estimate
//   information I(p) = Sn / (p (1 - p)),  se(p) = sqrt(p (1 - p) / Sn)
//   log-likelihood = Sy log p + (Sn - Sy) log(1 - p) + K,  K = sum a_i log C(n_i, y_i)
// identifiable once 0 < Sy < Sn (otherwise the MLE is on the boundary and the Wald se is 0).
// Innovation (plug-in): E[y] = n p, sd[y] = sqrt(n p (1 - p)), log p(y) = binomial log-mass.
#pragma once

#include <array>
#include <string_view>

#include "estimators/core/report.h"
#include "estimators/core/sample.h"
#include "estimators/core/state_codec.h"
#include "estimators/ml/ml_common.h"

namespace bayline::est {

class BinomialMl {
 public:
  using Options = MlOptions;
  static constexpr std::array<std::string_view, 1> kParameterNames{"probability"};

  struct State {
    double weight_sum = 0.0;  // W = sum a_i
    double sum_y = 0.0;       // Sy
    double sum_trials = 0.0;  // Sn
    double log_const = 0.0;   // K
    double count = 0.0;       // accepted observations, undiscounted
    double last_time = kNaN;

    void Pack(StateWriter& w) const;
    Status Unpack(StateReader& r);  // kInvalidState on short/long/inconsistent input
    Status Validate() const;        // finite; 0 <= Sy <= Sn; W = 0 iff count = 0 iff Sn = 0
  };

  // Precondition: options.Validate().ok().
  explicit BinomialMl(const Options& options = {}) : options_(options) {}

  // Accepts whole trials >= 1 and whole 0 <= y <= trials, weight > 0, x empty. On rejection the
  // Status names the field and nothing changes. *out: plug-in predictive before the update.
  Status Update(const Sample& s, Innovation* out = nullptr);

  // value = (probability), Wald interval; effective_n = W.
  ParameterReport Report(double level = 0.95) const;

  double probability() const;  // NaN before data
  double log_likelihood() const;

  const Options& options() const { return options_; }
  const State& state() const { return state_; }
  Status Restore(const State& state);

 private:
  Options options_;
  State state_;
};

}  // namespace bayline::est
