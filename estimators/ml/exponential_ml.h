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
#include <span>
#include <string_view>

#include "estimators/ml/scalar_ml.h"

namespace bayline::est {

struct ExponentialFamily {
  struct Stats {
    static constexpr std::string_view kName = "exponential";
    double mean = 0.0;  // ybar
    template <typename S>
    static auto Fields(S& s) {
      return std::array{&s.mean};
    }
    // Finite; ybar > 0 iff count > 0 (else 0).
    static Status Check(const ScalarMlState<Stats>& s);
  };
  using State = ScalarMlState<Stats>;
  static constexpr std::array<std::string_view, 1> kParameterNames{"rate"};

  static Status CheckSample(const Sample& s);  // y > 0
  static void Predictive(const State& st, const Sample& s, Innovation* out);
  static void Step(const State& st, double f, const Sample& s, State* next);
  static bool Estimate(const State& st, std::span<double, 1> value, std::span<double, 1> se);
  static double LogLikelihood(const State& st);
  static double Rate(const State& st);  // NaN before data
};

// Update accepts y > 0, weight > 0, x empty; Report gives (rate), identifiable after the first
// observation.
class ExponentialMl : public ScalarMl<ExponentialFamily> {
 public:
  using ScalarMl::ScalarMl;
  double rate() const { return ExponentialFamily::Rate(state()); }
};

}  // namespace bayline::est
