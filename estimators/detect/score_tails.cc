#include "estimators/detect/score_tails.h"

#include <algorithm>
#include <cmath>

#include "estimators/core/distributions.h"
#include "estimators/core/report.h"
#include "estimators/core/special_functions.h"

namespace bayline::est {
namespace {

constexpr PointTails kNaNTails{kNaN, kNaN, kNaN};

bool IsWhole(double v) { return std::isfinite(v) && v >= 0.0 && v == std::floor(v); }

// Phi^{-1}(u) for a lower tail 0 <= u <= 1/2, at least -kMaxNormalScore.
double LowerScore(double u) {
  if (!(u > 0.0)) return -dist::kMaxNormalScore;
  return std::max(dist::NormalQuantile(u), -dist::kMaxNormalScore);
}

// Tails with the small side `small_below` (P(Y < y) if true, else P(Y > y)) known.
PointTails FromSmallSide(bool small_below, double small, double at) {
  if (std::isnan(small) || std::isnan(at)) return kNaNTails;
  const double rest = std::max(0.0, 1.0 - small - at);
  return small_below ? PointTails{small, at, rest} : PointTails{rest, at, small};
}

double LogChoose(double n, double k) {
  if (k == 0.0 || k == n) return 0.0;
  return special::LogGamma(n + 1.0) - special::LogGamma(k + 1.0) - special::LogGamma(n - k + 1.0);
}

}  // namespace

double CounterUniform(uint64_t seed, uint64_t counter) {
  uint64_t z = seed + (counter + 1) * 0x9E3779B97F4A7C15ULL;
  z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
  z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
  z ^= z >> 31;
  return (static_cast<double>(z >> 11) + 0.5) * 0x1p-53;
}

double RandomizedNormalScore(const PointTails& t, double v) {
  const double lower = t.below + v * t.at;
  const double upper = t.above + (1.0 - v) * t.at;
  if (std::isnan(lower) || std::isnan(upper)) return kNaN;
  return lower <= upper ? LowerScore(lower) : -LowerScore(upper);
}

PointTails BinomialTails(double y, double n, double p, double q) {
  if (!IsWhole(n) || !IsWhole(y) || y > n || !(p >= 0.0 && p <= 1.0) || !(q >= 0.0 && q <= 1.0))
    return kNaNTails;
  const double at = std::exp(dist::BinomialLogPmf(y, n, p));
  if (y <= n * p) {  // P(Y <= y - 1) = I_q(n - y + 1, y)
    const double below = y == 0.0 ? 0.0 : special::BetaIWithComplement(n - y + 1.0, y, q, p, false);
    PointTails t = FromSmallSide(true, below, at);
    if (y == n) t.above = 0.0;
    return t;
  }
  // P(Y >= y + 1) = I_p(y + 1, n - y)
  const double above = y == n ? 0.0 : special::BetaIWithComplement(y + 1.0, n - y, p, q, false);
  PointTails t = FromSmallSide(false, above, at);
  if (y == 0.0) t.below = 0.0;
  return t;
}

PointTails PoissonTails(double y, double mean) {
  if (!IsWhole(y) || !(mean >= 0.0) || !std::isfinite(mean)) return kNaNTails;
  const double at = std::exp(dist::PoissonLogPmf(y, mean));
  if (y <= mean) {  // P(Y <= y - 1) = Q(y, mean)
    return FromSmallSide(true, y == 0.0 ? 0.0 : special::GammaQ(y, mean), at);
  }
  return FromSmallSide(false, special::GammaP(y + 1.0, mean), at);  // P(Y >= y + 1)
}

PointTails HypergeometricTails(double y, double population, double successes, double draws) {
  const double big_n = population, k = successes, m = draws;
  if (!IsWhole(y) || !IsWhole(big_n) || !IsWhole(k) || !IsWhole(m) || k > big_n || m > big_n)
    return kNaNTails;
  const double failures = big_n - k;
  const double lo = std::max(0.0, m - failures), hi = std::min(m, k);
  if (y < lo) return {0.0, 0.0, 1.0};
  if (y > hi) return {1.0, 0.0, 0.0};
  const double at = std::exp(LogChoose(k, y) + LogChoose(failures, m - y) - LogChoose(big_n, m));
  if (std::isnan(at)) return kNaNTails;
  const double mode = std::floor((m + 1.0) * (k + 1.0) / (big_n + 2.0));
  // Sum of the terms beyond y on its side, relative to P(Y = y).
  double sum = 0.0, term = 1.0, steps = 0.0;
  const bool lower_side = y <= mode;
  if (lower_side) {
    for (double j = y; j > lo; j -= 1.0) {  // ratio P(j - 1) / P(j)
      const double r = j * (failures - m + j) / ((k - j + 1.0) * (m - j + 1.0));
      term *= r;
      sum += term;
      if (r < 1.0 && term * r / (1.0 - r) <= 1e-17 * sum) break;
      if (++steps > kMaxHypergeometricTerms) return kNaNTails;
    }
  } else {
    for (double j = y; j < hi; j += 1.0) {  // ratio P(j + 1) / P(j)
      const double r = (k - j) * (m - j) / ((j + 1.0) * (failures - m + j + 1.0));
      term *= r;
      sum += term;
      if (r < 1.0 && term * r / (1.0 - r) <= 1e-17 * sum) break;
      if (++steps > kMaxHypergeometricTerms) return kNaNTails;
    }
  }
  PointTails t = FromSmallSide(lower_side, std::min(1.0, at * sum), at);
  if (y == lo) t.below = 0.0;  // ends of the support: exact, whatever the rounding of `at`
  if (y == hi) t.above = 0.0;
  return t;
}

PointTails BetaTails(double x, double xc, double a, double b) {
  if (!(a > 0.0) || !(b > 0.0) || !(x >= 0.0 && x <= 1.0) || !(xc >= 0.0 && xc <= 1.0))
    return kNaNTails;
  const bool lower_side = x <= a / (a + b);
  return FromSmallSide(lower_side, special::BetaIWithComplement(a, b, x, xc, !lower_side), 0.0);
}

PointTails GammaTails(double y, double shape, double rate) {
  if (!(y >= 0.0) || !(shape > 0.0) || !(rate > 0.0) || !std::isfinite(y * rate)) return kNaNTails;
  const double x = y * rate;
  const bool lower_side = x <= shape;
  return FromSmallSide(lower_side,
                       lower_side ? special::GammaP(shape, x) : special::GammaQ(shape, x), 0.0);
}

}  // namespace bayline::est
