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
// integer frequency weights the unbiased divisor would be W - 1 instead; we do not guess the
// intent.) Updates are the weighted Welford recursion with forgetting f, on the shifted value u = y
// - c:
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
#include <span>
#include <string_view>

#include "estimators/ml/scalar_ml.h"

namespace bayline::est {

struct GaussianFamily {
  struct Stats {
    static constexpr std::string_view kName = "gaussian";
    double weight_sq_sum = 0.0;  // W2
    double shift = 0.0;          // c: first accepted y (0 before data)
    double mean_shifted = 0.0;   // m: weighted mean of y - c
    double m2 = 0.0;             // discounted weighted sum of squared deviations from mean
    template <typename S>
    static auto Fields(S& s) {
      return std::array{&s.weight_sq_sum, &s.shift, &s.mean_shifted, &s.m2};
    }
    // Finite, W2 >= 0, M2 >= 0, W2 <= W^2 (up to rounding), no moments or shift without data.
    static Status Check(const ScalarMlState<Stats>& s);
  };
  using State = ScalarMlState<Stats>;
  static constexpr std::array<std::string_view, 2> kParameterNames{"mean", "variance"};

  static Status CheckSample(const Sample&) { return Status::Ok(); }  // any finite y
  // N(mean, variance_ml), valid once M2 > 0.
  static void Predictive(const State& st, const Sample& s, Innovation* out);
  // The weighted Welford recursion on s.y (the lognormal family passes log y).
  static void Step(const State& st, double f, const Sample& s, State* next);
  static bool Estimate(const State& st, std::span<double, 2> value, std::span<double, 2> se);
  static double LogLikelihood(const State& st);

  static double Mean(const State& st) { return st.shift + st.mean_shifted; }
  static double VarianceMl(const State& st);  // NaN before any data
};

// Update accepts any finite y, weight > 0, x empty; the innovation is valid once two distinct
// values were seen. Report gives (mean, variance_ml), identifiable once M2 > 0.
class GaussianMl : public ScalarMl<GaussianFamily> {
 public:
  using ScalarMl::ScalarMl;
  double mean() const { return GaussianFamily::Mean(state()); }
  // NaN before any data.
  double variance_ml() const { return GaussianFamily::VarianceMl(state()); }
  // NaN until n_eff > 1.
  double variance_unbiased() const;
  // Kish's n_eff = W^2 / W2 (0 before any data).
  double effective_sample_size() const;
};

}  // namespace bayline::est
