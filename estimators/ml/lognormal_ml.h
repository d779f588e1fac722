// LognormalMl: online maximum likelihood for log y ~ N(meanlog, sdlog^2), y > 0.
//
// The estimator is GaussianMl applied to u = log y (same state, same Welford recursion, same
// forgetting; see gaussian_ml.h):
//   meanlog = sum a_i u_i / W,   sdlog = sqrt(M2 / W)   (the ML estimates; sdlog is not
//   bias-corrected) se(meanlog) = sdlog / sqrt(W),   se(sdlog) = sdlog / sqrt(2 W)   (Fisher
//   information) log-likelihood = l_gaussian(u) - sum a_i u_i = l_gaussian(u) - W meanlog (Jacobian
//   of y -> log y)
// The innovation is on the scale of y under the plug-in lognormal:
//   E[y] = exp(meanlog + sdlog^2 / 2),  sd[y] = E[y] sqrt(exp(sdlog^2) - 1),
//   log p(y) = log N(log y; meanlog, sdlog) - log y.
#pragma once

#include <array>
#include <cmath>
#include <span>
#include <string_view>

#include "estimators/ml/gaussian_ml.h"

namespace bayline::est {

struct LognormalFamily {
  static constexpr std::string_view kName = "lognormal";
  using Stats = GaussianFamily::Stats;  // the moments of log y
  using State = ScalarMlState<Stats>;
  static constexpr std::array<std::string_view, 2> kParameterNames{"meanlog", "sdlog"};

  static Status CheckSample(const Sample& s);  // y > 0
  static void Predictive(const State& st, const Sample& s, Innovation* out);
  static void Step(const State& st, double f, const Sample& s, State* next);  // gaussian on log y
  static bool Estimate(const State& st, std::span<double, 2> value, std::span<double, 2> se);
  static double LogLikelihood(const State& st);
};

// Update accepts y > 0, weight > 0, x empty; Report gives (meanlog, sdlog), identifiable once two
// distinct values were seen. The state is GaussianMl's, of log y.
class LognormalMl : public ScalarMl<LognormalFamily> {
 public:
  using ScalarMl::ScalarMl;
  double meanlog() const { return GaussianFamily::Mean(state()); }
  double sdlog() const {
    return std::sqrt(GaussianFamily::VarianceMl(state()));
  }  // NaN before data
};

}  // namespace bayline::est
