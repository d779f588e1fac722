// PoissonMl: online maximum likelihood for counts y ~ Poisson(rate * exposure).
//
// Model: y_i in {0, 1, 2, ...} events in exposure e_i > 0 (Sample.exposure), rate >= 0 per unit
// exposure. With discounted weights a_i (ml_common.h):
//   Sy = sum a_i y_i,  Se = sum a_i e_i          (state.sum_y, state.sum_exposure)
//   rate = Sy / Se                               ML estimate
//   information I(rate) = Se / rate,  se(rate) = sqrt(rate / Se)
//   log-likelihood = Sy log(rate) - rate Se + K,  K = sum a_i (y_i log e_i - log y_i!)
//   (state.log_const)
// Counts must be whole numbers: a non-integer y is rejected (kOutOfDomain) rather than silently
// using the continuous extension of the mass function, because it almost always means a unit or
// aggregation mistake upstream.
// identifiable once Sy > 0: with no events the MLE sits on the boundary rate = 0, where the Wald
// interval is degenerate (se = 0), so the report says "not yet" instead.
// Innovation (plug-in): E[y] = rate e, sd[y] = sqrt(rate e), log p(y) = Poisson log-mass.
#pragma once

#include <array>
#include <span>
#include <string_view>

#include "estimators/ml/scalar_ml.h"

namespace bayline::est {

struct PoissonFamily {
  struct Stats {
    static constexpr std::string_view kName = "poisson";
    double sum_y = 0.0;         // Sy
    double sum_exposure = 0.0;  // Se
    double log_const = 0.0;     // K
    template <typename S>
    static auto Fields(S& s) {
      return std::array{&s.sum_y, &s.sum_exposure, &s.log_const};
    }
    // Finite; Sy, Se >= 0; Se = 0 iff count = 0.
    static Status Check(const ScalarMlState<Stats>& s);
  };
  using State = ScalarMlState<Stats>;
  static constexpr std::array<std::string_view, 1> kParameterNames{"rate"};

  // y a whole number >= 0, exposure > 0.
  static Status CheckSample(const Sample& s);
  static void Predictive(const State& st, const Sample& s,
                         Innovation* out);  // invalid while rate = 0
  static void Step(const State& st, double f, const Sample& s, State* next);
  static bool Estimate(const State& st, std::span<double, 1> value, std::span<double, 1> se);
  static double LogLikelihood(const State& st);
  static double Rate(const State& st);  // NaN before data
};

// Update accepts y a whole number >= 0, exposure > 0, weight > 0, x empty; Report gives (rate),
// identifiable once Sy > 0.
class PoissonMl : public ScalarMl<PoissonFamily> {
 public:
  using ScalarMl::ScalarMl;
  double rate() const { return PoissonFamily::Rate(state()); }
};

}  // namespace bayline::est
