// Log density of the standard Student t distribution, fast for the large degrees of freedom a
// streaming estimator reaches (the predictive densities of ls and of the map models). a = dof / 2:
//   log f(u) = log Gamma(a + 1/2) - log Gamma(a) - 1/2 log(2 a pi) - (2a + 1)/2 log1p(u^2 / (2a)),
// and log Gamma(a + 1/2) - log Gamma(a) - 1/2 log a = -1/(8a) + 1/(192 a^3) - 1/(640 a^5)
// + 17/(14336 a^7) - 31/(18432 a^9) + O(a^-11) (asymptotic series; checked against
// dist::StudentTLogPdf in the unit tests), so no log-gamma is needed: for dof >= 30 the truncation
// error is below 5e-16. Smaller dof use dist::StudentTLogPdf.
#pragma once

#include <cmath>
#include <numbers>

#include "estimators/core/distributions.h"

namespace bayline::est {

// log(1 + x) for x > -1 by Kahan's correction of log(1 + x) (a few ulps; one log call, which is
// much cheaper than the library log1p).
inline double Log1pFast(double x) {
  const double v = 1.0 + x;
  return v == 1.0 ? x : std::log(v) * x / (v - 1.0);
}

inline double StudentTLogDensity(double u, double dof) {
  if (!(dof >= 30.0)) return dist::StudentTLogPdf(u, dof);
  const double inv_dof = 1.0 / dof;
  const double r = 2.0 * inv_dof;  // 1 / a
  const double r2 = r * r;
  const double series =
      r *
      (-1.0 / 8 + r2 * (1.0 / 192 + r2 * (-1.0 / 640 + r2 * (17.0 / 14336 - r2 * (31.0 / 18432)))));
  constexpr double kHalfLog2Pi = 0.91893853320467274178;  // log(2 pi) / 2
  return series - kHalfLog2Pi - 0.5 * (dof + 1.0) * Log1pFast(u * u * inv_dof);
}

}  // namespace bayline::est
