// LognormalMl: online maximum likelihood for log y ~ N(meanlog, sdlog^2), y > 0.
//
// The estimator is GaussianMl applied to u = log y (same state, same Welford recursion, same
// forgetting; see gaussian_ml.h):
//   meanlog = sum a_i u_i / W,   sdlog = sqrt(M2 / W)   (the ML estimates; sdlog is not bias-corrected)
//   se(meanlog) = sdlog / sqrt(W),   se(sdlog) = sdlog / sqrt(2 W)   (Fisher information)
//   log-likelihood = l_gaussian(u) - sum a_i u_i = l_gaussian(u) - W meanlog   (Jacobian of y -> log y)
// The innovation is on the scale of y under the plug-in lognormal:
//   E[y] = exp(meanlog + sdlog^2 / 2),  sd[y] = E[y] sqrt(exp(sdlog^2) - 1),
//   log p(y) = log N(log y; meanlog, sdlog) - log y.
#pragma once

#include <array>
#include <string_view>

#include "estimators/ml/gaussian_ml.h"

namespace bayline::est {

class LognormalMl {
 public:
  using Options = MlOptions;
  using State = GaussianMl::State;  // the moments of log y
  static constexpr std::array<std::string_view, 2> kParameterNames{"meanlog", "sdlog"};

  // Precondition: options.Validate().ok().
  explicit LognormalMl(const Options& options = {}) : log_(options) {}

  // As GaussianMl::Update, plus y > 0 (kOutOfDomain otherwise). Rejection changes nothing.
  Status Update(const Sample& s, Innovation* out = nullptr);

  // value = (meanlog, sdlog), identifiable once two distinct values were seen; effective_n = W.
  ParameterReport Report(double level = 0.95) const;

  double meanlog() const { return log_.mean(); }
  double sdlog() const;  // NaN before data
  double log_likelihood() const;

  const Options& options() const { return log_.options(); }
  const State& state() const { return log_.state(); }
  Status Restore(const State& state) { return log_.Restore(state); }

 private:
  GaussianMl log_;
};

}  // namespace bayline::est
