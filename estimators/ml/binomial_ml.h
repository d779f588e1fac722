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
#include <span>
#include <string_view>

#include "estimators/ml/scalar_ml.h"

namespace bayline::est {

struct BinomialFamily {
  struct Stats {
    static constexpr std::string_view kName = "binomial";
    double sum_y = 0.0;       // Sy
    double sum_trials = 0.0;  // Sn
    double log_const = 0.0;   // K
    template <typename S>
    static auto Fields(S& s) {
      return std::array{&s.sum_y, &s.sum_trials, &s.log_const};
    }
    // Finite; Sy, K >= 0; Sy <= Sn (up to rounding); Sn = 0 iff count = 0.
    static Status Check(const ScalarMlState<Stats>& s);
  };
  using State = ScalarMlState<Stats>;
  static constexpr std::array<std::string_view, 1> kParameterNames{"probability"};

  // Whole trials >= 1 and whole 0 <= y <= trials.
  static Status CheckSample(const Sample& s);
  static void Predictive(const State& st, const Sample& s, Innovation* out);  // needs 0 < p < 1
  static void Step(const State& st, double f, const Sample& s, State* next);
  static bool Estimate(const State& st, std::span<double, 1> value, std::span<double, 1> se);
  static double LogLikelihood(const State& st);
  static double Probability(const State& st);  // NaN before data
};

// Update accepts whole trials >= 1 and whole 0 <= y <= trials, weight > 0, x empty; Report gives
// (probability), identifiable once 0 < Sy < Sn.
class BinomialMl : public ScalarMl<BinomialFamily> {
 public:
  using ScalarMl::ScalarMl;
  double probability() const { return BinomialFamily::Probability(state()); }
};

}  // namespace bayline::est
