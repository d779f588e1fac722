#include "estimators/core/distributions.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>

#include "estimators/core/special_functions.h"

namespace bayline::est::dist {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr double kInf = std::numeric_limits<double>::infinity();
constexpr double kLogSqrt2Pi = 0.91893853320467274178;  // log(sqrt(2 pi))
// Beyond these sizes the iterative incomplete functions get slow; the limiting approximations are
// then accurate to far better than the statistical error of any interval they produce.
constexpr double kStudentTNormalDof = 1e7;   // t(dof) -> N(0, 1), error O(1/dof)
constexpr double kGammaWilsonHilfertyShape = 1e7;  // cube-root normal approximation

// Solves F(x) = p on the support (lo, hi) of a continuous distribution. `tail` selects the side
// used: for p <= 1/2 the lower tail F, otherwise the upper tail S = 1 - F, so that the target
// keeps full relative precision. Newton steps x -= g / f on g(x) = F(x) - p (resp. (1-p) - S(x)),
// which is increasing, kept inside a bracket that every evaluation tightens; a step that leaves the
// bracket (or a zero density) is replaced by bisection, or by expansion toward an infinite end.
template <typename Cdf, typename Sf, typename LogPdf>
double SolveQuantile(double p, Cdf cdf, Sf sf, LogPdf log_pdf, double x, double lo, double hi) {
  if (!(p > 0.0 && p < 1.0)) {
    if (p == 0.0) return lo;
    if (p == 1.0) return hi;
    return kNaN;
  }
  const bool upper = p > 0.5;
  const double target = upper ? 1.0 - p : p;
  auto g = [&](double v) { return upper ? target - sf(v) : cdf(v) - target; };
  double a = lo, b = hi;
  if (!(x > a && x < b)) x = std::isfinite(a) && std::isfinite(b) ? 0.5 * (a + b) : (std::isfinite(a) ? a + 1.0 : (std::isfinite(b) ? b - 1.0 : 0.0));
  // Stopping: Newton converges quadratically, leaving an error of about C step^2 after a step (C =
  // |x f' / 2f| relative, a few hundred at most here), so a Newton step below kNewtonDone x ends the
  // search. Near the root the step is ruled by the rounding noise of F itself (up to ~1e-11 in p for
  // the incomplete beta at large parameters) and may point out of the bracket that same noise set;
  // after a Newton step below kNoiseFloor x that means x is as good as F allows, where bisecting on
  // would only move x around within the noise (it used to cost a dozen extra evaluations).
  constexpr double kNewtonDone = 1e-10, kNoiseFloor = 1e-8;
  double last_newton = kInf;  // relative size of the last Newton step, kInf after a bisection
  for (int i = 0; i < 400; ++i) {
    const double gx = g(x);
    if (gx == 0.0) return x;
    if (gx < 0.0) a = x; else b = x;
    const double density = std::exp(log_pdf(x));
    double next = x - gx / density;
    if (density > 0.0 && std::isfinite(next) && next > a && next < b) {
      // Relative to the distance from the nearer end of the support too: near a finite end (a
      // beta quantile close to 1) the precision that matters is that of the distance to it.
      last_newton = std::fabs(next - x) / std::min({std::fabs(next), next - lo, hi - next});
      if (last_newton <= kNewtonDone) return next;
    } else {
      if (last_newton <= kNoiseFloor) return x;
      last_newton = kInf;
      if (std::isfinite(a) && std::isfinite(b)) {
        next = 0.5 * (a + b);
      } else if (std::isfinite(a)) {  // root above x, upper end open
        next = x + std::max(1.0, std::fabs(x));
      } else {                        // root below x, lower end open
        next = x - std::max(1.0, std::fabs(x));
      }
    }
    if (std::fabs(next - x) <= 2e-16 * std::fabs(x) || next == x) return next;
    if (std::isfinite(a) && std::isfinite(b) && (b - a) <= 1e-300) return next;
    x = next;
  }
  return x;
}

}  // namespace

double NormalLogPdf(double x, double mean, double sd) {
  if (!(sd > 0)) return kNaN;
  const double z = (x - mean) / sd;
  return -0.5 * z * z - kLogSqrt2Pi - std::log(sd);
}

double NormalCdf(double z) { return 0.5 * std::erfc(-z * std::numbers::sqrt2 * 0.5); }
double NormalSf(double z) { return 0.5 * std::erfc(z * std::numbers::sqrt2 * 0.5); }

double NormalQuantile(double p) {
  if (!(p > 0.0 && p < 1.0)) return p == 0.0 ? -kInf : (p == 1.0 ? kInf : kNaN);
  // Work in the lower tail q = min(p, 1 - p) and solve Phi(x) = q for x <= 0, which keeps full
  // relative precision in both tails (Phi(-|x|) = erfc(|x| / sqrt 2) / 2 has no cancellation).
  // Starting value: the rational approximation of Abramowitz & Stegun 26.2.23 (|error| < 4.5e-4);
  // then Halley steps on f(x) = Phi(x) - q, f' = phi(x), f'' = -x phi(x):
  //   x <- x - u / (1 + x u / 2),  u = (Phi(x) - q) / phi(x),
  // which converge cubically: 4.5e-4 -> ~1e-10 -> full precision after the second step, so exactly
  // two are taken (a third moved x by at most rounding: checked against a long double Newton
  // reference on 1e6 p in (1e-307, 1/2), worst relative error 9.8e-16 with two steps, 8.8e-16 with
  // three, for |x| > 0.1).
  const double q = p < 0.5 ? p : 1.0 - p;
  const double t = std::sqrt(-2.0 * std::log(q));
  double x = -(t - (2.515517 + t * (0.802853 + t * 0.010328)) /
                       (1.0 + t * (1.432788 + t * (0.189269 + t * 0.001308))));
  for (int i = 0; i < 2; ++i) {
    const double density = std::exp(NormalLogPdf(x));
    if (!(density > 0.0)) break;
    const double u = (NormalCdf(x) - q) / density;
    x -= u / (1.0 + 0.5 * x * u);
  }
  return p < 0.5 ? x : -x;
}

double NormalLowerQuantileFrom(double q, double x) {
  if (!(q > 0.0 && q <= 0.5) || !(x <= 0.0) || !std::isfinite(x)) return NormalQuantile(q);
  for (int i = 0; i < 4; ++i) {
    const double density = std::exp(NormalLogPdf(x));
    if (!(density > 0.0)) break;
    const double u = (NormalCdf(x) - q) / density;
    const double step = u / (1.0 + 0.5 * x * u);
    x -= step;
    // Halley's error after a step is ~K step^3 with K = x^2 / 12 + 1/6 (up to ~120 for q >= 1e-300).
    if (std::fabs(step) <= 1e-7 * std::min(1.0, std::fabs(x))) break;
  }
  return x;
}

double StudentTLogPdf(double t, double dof) {
  if (!(dof > 0)) return kNaN;
  // log Gamma((dof+1)/2) - log Gamma(dof/2) - log sqrt(pi) = -log B(dof/2, 1/2): LogBeta keeps full
  // precision for large dof, where the difference of two log-gammas would lose it. Exact at any
  // dof (no normal limit), so log-likelihood sums stay accurate on old channels.
  return -special::LogBeta(0.5 * dof, 0.5) - 0.5 * std::log(dof) -
         0.5 * (dof + 1) * std::log1p(t * t / dof);
}

double StudentTCdf(double t, double dof) {
  if (!(dof > 0) || std::isnan(t)) return kNaN;
  if (dof > kStudentTNormalDof) return NormalCdf(t);
  if (std::isinf(t)) return t > 0 ? 1.0 : 0.0;
  const double t2 = t * t;
  // P(|T| > |t|) = I_{dof/(dof+t^2)}(dof/2, 1/2) = 1 - I_{t^2/(dof+t^2)}(1/2, dof/2); the form
  // whose argument is small is the accurate one.
  const double x = t2 / (dof + t2), y = dof / (dof + t2);
  const double two_tail = special::BetaIWithComplement(0.5, 0.5 * dof, x, y, /*complement=*/true);
  return t > 0 ? 1.0 - 0.5 * two_tail : 0.5 * two_tail;
}

double StudentTQuantile(double p, double dof) {
  if (!(dof > 0)) return kNaN;
  if (dof > kStudentTNormalDof) return NormalQuantile(p);
  const double x0 = NormalQuantile(p);
  return SolveQuantile(
      p, [dof](double v) { return StudentTCdf(v, dof); },
      [dof](double v) { return StudentTCdf(-v, dof); },
      [dof](double v) { return StudentTLogPdf(v, dof); }, x0, -kInf, kInf);
}

double GammaLogPdf(double x, double shape, double rate) {
  if (!(shape > 0 && rate > 0)) return kNaN;
  if (x < 0) return -kInf;
  if (x == 0) return shape < 1 ? kInf : (shape == 1 ? std::log(rate) : -kInf);
  return shape * std::log(rate) + (shape - 1) * std::log(x) - rate * x - special::LogGamma(shape);
}

namespace {
// Wilson-Hilferty: (X / shape)^(1/3) is nearly N(1 - 1/(9 shape), 1/(9 shape)) for X ~ Gamma(shape, 1).
double WilsonHilfertyZ(double y, double shape) {
  const double v = 1.0 / (9.0 * shape);
  return (std::cbrt(y / shape) - (1.0 - v)) / std::sqrt(v);
}
}  // namespace

double GammaCdf(double x, double shape, double rate) {
  if (!(shape > 0 && rate > 0) || std::isnan(x)) return kNaN;
  if (x <= 0) return 0.0;
  if (shape > kGammaWilsonHilfertyShape) return NormalCdf(WilsonHilfertyZ(rate * x, shape));
  return special::GammaP(shape, rate * x);
}

double GammaQuantile(double p, double shape, double rate) {
  if (!(shape > 0 && rate > 0)) return kNaN;
  const double v = 1.0 / (9.0 * shape);
  const double z = NormalQuantile(p);
  const double c = 1.0 - v + z * std::sqrt(v);
  if (shape > kGammaWilsonHilfertyShape) return shape * c * c * c / rate;
  double y0 = c > 0 ? shape * c * c * c : shape * 1e-3;
  // Lower tail for small shape: P(shape, y) ~ y^shape / Gamma(shape + 1) as y -> 0.
  const double y_small = std::exp((std::log(p) + special::LogGamma(shape + 1.0)) / shape);
  if ((shape < 1.0 || c <= 0) && y_small < 1.0) y0 = y_small;
  const double y = SolveQuantile(
      p, [shape](double y) { return special::GammaP(shape, y); },
      [shape](double y) { return special::GammaQ(shape, y); },
      [shape](double y) { return GammaLogPdf(y, shape, 1.0); }, y0, 0.0, kInf);
  return y / rate;
}

double ChiSquaredCdf(double x, double k) { return GammaCdf(x, 0.5 * k, 0.5); }
double ChiSquaredQuantile(double p, double k) { return GammaQuantile(p, 0.5 * k, 0.5); }

double BetaLogPdf(double x, double a, double b) {
  if (!(a > 0 && b > 0)) return kNaN;
  if (x < 0 || x > 1) return -kInf;
  if (x == 0) return a < 1 ? kInf : (a == 1 ? -special::LogBeta(a, b) : -kInf);
  if (x == 1) return b < 1 ? kInf : (b == 1 ? -special::LogBeta(a, b) : -kInf);
  return (a - 1) * std::log(x) + (b - 1) * std::log1p(-x) - special::LogBeta(a, b);
}

double BetaCdf(double x, double a, double b) {
  if (!(a > 0 && b > 0) || std::isnan(x)) return kNaN;
  if (x <= 0) return 0.0;
  if (x >= 1) return 1.0;
  return special::BetaI(a, b, x);
}

double BetaQuantile(double p, double a, double b) {
  if (!(a > 0 && b > 0)) return kNaN;
  const double mean = a / (a + b);
  const double sd = std::sqrt(a * b / ((a + b) * (a + b) * (a + b + 1)));
  double x0 = mean + NormalQuantile(p) * sd;
  if (!(x0 > 0 && x0 < 1)) x0 = p < 0.5 ? 0.5 * mean : 0.5 * (1 + mean);
  return SolveQuantile(
      p, [a, b](double x) { return BetaCdf(x, a, b); },
      [a, b](double x) { return special::BetaIWithComplement(a, b, x, 1.0 - x, true); },
      [a, b](double x) { return BetaLogPdf(x, a, b); }, x0, 0.0, 1.0);
}

double PoissonLogPmf(double y, double mean) {
  if (!(mean >= 0) || !(y >= 0)) return y < 0 ? -kInf : kNaN;
  if (mean == 0) return y == 0 ? 0.0 : -kInf;
  return y * std::log(mean) - mean - special::LogGamma(y + 1);
}

double BinomialLogPmf(double y, double n, double p) {
  if (!(n >= 0) || !(p >= 0 && p <= 1)) return kNaN;
  if (y < 0 || y > n) return -kInf;
  const double log_choose =
      special::LogGamma(n + 1) - special::LogGamma(y + 1) - special::LogGamma(n - y + 1);
  const double a = y == 0 ? 0.0 : (p == 0 ? -kInf : y * std::log(p));
  const double b = y == n ? 0.0 : (p == 1 ? -kInf : (n - y) * std::log1p(-p));
  return log_choose + a + b;
}

}  // namespace bayline::est::dist
