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
#include <span>
#include <string_view>

#include "estimators/ml/scalar_ml.h"

namespace bayline::est {

struct GammaFamily {
  struct Stats {
    static constexpr std::string_view kName = "gamma";
    double ref = 0.0;       // c: first accepted y (0 before data)
    double mean_d = 0.0;    // d: weighted mean of y / c - 1
    double mean_log = 0.0;  // l: weighted mean of log(y / c)
    double shape = kNaN;    // cached MLE of k; NaN while not identifiable
    template <typename S>
    static auto Fields(S& s) {
      return std::array{&s.ref, &s.mean_d, &s.mean_log, &s.shape};
    }
    // c, d, l finite; c > 0 iff count > 0; 1 + d > 0; shape NaN or > 0 finite, and NaN exactly
    // when s = log1p(d) - l is at most kMinStatistic.
    static Status Check(const ScalarMlState<Stats>& s);
  };
  using State = ScalarMlState<Stats>;
  static constexpr std::array<std::string_view, 2> kParameterNames{"shape", "rate"};
  // s below this is indistinguishable from rounding in the two means: all values (nearly) equal.
  static constexpr double kMinStatistic = 1e-13;

  static Status CheckSample(const Sample& s);  // y > 0
  static void Predictive(const State& st, const Sample& s, Innovation* out);
  // Solves for the new shape (warm-started from the old one); a solver failure leaves it NaN,
  // which Check refuses.
  static void Step(const State& st, double f, const Sample& s, State* next);
  static bool Estimate(const State& st, std::span<double, 2> value, std::span<double, 2> se);
  static double LogLikelihood(const State& st);
  static double Mean(const State& st);  // ybar; NaN before data
};

// Update accepts y > 0, weight > 0, x empty (kNumericalFailure when the shape solver fails);
// Report gives (shape, rate), identifiable once two distinct values were seen.
class GammaMl : public ScalarMl<GammaFamily> {
 public:
  using ScalarMl::ScalarMl;
  double shape() const { return state().shape; }
  double rate() const { return state().shape / mean(); }  // NaN while not identifiable
  double mean() const { return GammaFamily::Mean(state()); }
};

}  // namespace bayline::est
