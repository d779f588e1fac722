#include "estimators/ml/gamma_shape.h"

#include <cmath>
#include <limits>

#include "estimators/core/special_functions.h"

namespace bayline::est::gamma_shape {
namespace {
constexpr double kSeriesFrom = 10.0;
constexpr int kMaxIterations = 200;
}  // namespace

double G(double k) {
  if (k >= kSeriesFrom) {
    // 1/(2k) + sum_n B_2n / (2n k^2n); the next omitted term is below 1e-16 relative at k = 10.
    const double i = 1.0 / k, i2 = i * i;
    const double series =
        i2 *
        (1.0 / 12 +
         i2 * (-1.0 / 120 +
               i2 * (1.0 / 252 + i2 * (-1.0 / 240 + i2 * (1.0 / 132 + i2 * (-691.0 / 32760 +
                                                                            i2 * (1.0 / 12)))))));
    return 0.5 * i + series;
  }
  return std::log(k) - special::Digamma(k);
}

double GPrime(double k) {
  if (k >= kSeriesFrom) {
    const double i = 1.0 / k, i2 = i * i;
    const double tail =
        i2 * i *
        (1.0 / 6 + i2 * (-1.0 / 30 + i2 * (1.0 / 42 + i2 * (-1.0 / 30 + i2 * (5.0 / 66)))));
    return -(0.5 * i2 + tail);
  }
  return 1.0 / k - special::Trigamma(k);
}

double InformationFactor(double k) { return -k * GPrime(k); }

double StartingValue(double s) {
  return (3.0 - s + std::sqrt((s - 3.0) * (s - 3.0) + 24.0 * s)) / (12.0 * s);
}

double Solve(double s, double warm_start) {
  if (!(s > 0) || !std::isfinite(s)) return std::numeric_limits<double>::quiet_NaN();
  double k = (warm_start > 0 && std::isfinite(warm_start)) ? warm_start : StartingValue(s);
  double lo = 0.0, hi = std::numeric_limits<double>::infinity();  // bracket on k
  for (int it = 0; it < kMaxIterations; ++it) {
    const double h = G(k) - s;
    if (h == 0) return k;
    if (h > 0)
      lo = k;
    else
      hi = k;  // g decreasing: g(k) > s means the root is above k
    double next = k * std::exp(-h / (k * GPrime(k)));
    if (!(next > lo && next < hi) || !std::isfinite(next)) {
      if (std::isinf(hi))
        next = 2.0 * k;
      else if (lo == 0.0)
        next = 0.5 * k;
      else
        next = std::sqrt(lo * hi);
    }
    // Newton in log k converges quadratically with constant about 1/2 (h ~ e^-t / 2 for large k,
    // ~ e^-t for small k): after a relative step below 1e-8 the next error is below 1e-16.
    if (std::fabs(next - k) <= 1e-8 * k) return next;
    k = next;
  }
  return k;
}

}  // namespace bayline::est::gamma_shape
