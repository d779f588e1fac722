#include "estimators/core/distributions.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>

#include "estimators/core/quantile_memo.h"
#include "estimators/core/special_functions.h"

namespace bayline::est::dist {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr double kInf = std::numeric_limits<double>::infinity();
constexpr double kLogSqrt2Pi = 0.91893853320467274178;  // log(sqrt(2 pi))
// Beyond these sizes the iterative incomplete functions get slow; the limiting approximations are
// then accurate to far better than the statistical error of any interval they produce.
constexpr double kStudentTNormalDof = 1e7;         // t(dof) -> N(0, 1), error O(1/dof)
constexpr double kGammaWilsonHilfertyShape = 1e7;  // cube-root normal approximation
// StudentTNormalScore uses Hill's expansion for |t| <= max_abs_t at dof >= min_dof: the region
// where its error in z, measured against 45-digit mpmath (300 t per step, evaluated in double), is
// below 1.6e-11. The error grows with |t| and falls like dof^-5; the largest at each step's corner:
// 1.5e-11 (20, 1), 1.4e-11 (30, 2), 1.6e-12 (50, 3), 1.2e-11 (100, 6), 1.6e-11 (200, 10),
// 3.9e-14 (1e4, 40). Past a step the error grows fast: 1.7e-10 at dof 20, |t| = 2.5; 7e-7 at dof
// 200, |t| = 40. See tests/reference/core.
struct HillRegionStep {
  double min_dof, max_abs_t;
};
constexpr HillRegionStep kHillRegion[] = {{1e4, 40.0}, {200.0, 10.0}, {100.0, 6.0},
                                          {50.0, 3.0}, {30.0, 2.0},   {20.0, 1.0}};
bool InHillRegion(double abs_t, double dof) {
  for (const HillRegionStep& step : kHillRegion) {
    if (dof >= step.min_dof) return abs_t <= step.max_abs_t;
  }
  return false;
}
// StudentTQuantile returns the Cornish-Fisher expansion from dof >= 250 max(1, z^2).
constexpr double kStudentTCornishFisherDof = 250.0;

// Solves F(x) = p on the support (lo, hi) of a continuous distribution. `tail` selects the side
// used: for p <= 1/2 the lower tail F, otherwise the upper tail S = 1 - F, so that the target
// keeps full relative precision. On g(x) = F(x) - p (resp. (1-p) - S(x)), which is increasing, with
// g' = f and g'' = f L (L = d log f / dx, `dlog_pdf`), Halley steps
//   x <- x - s / (1 - s L / 2),  s = g / f,
// (plain Newton when |s L / 2| > 1/2, far from the root) are kept inside a bracket that every
// evaluation tightens; a step that leaves the bracket (or a zero density) is replaced by bisection,
// or by expansion toward an infinite end.
// Failure result: NaN when an evaluation of the distribution function is NaN, or when no
// stopping rule is met within kMaxQuantileSteps steps and the bracket still has an infinite end;
// with a finite bracket the last iterate is returned (every step tightens the bracket, and 400
// halvings leave it below 2^-400 of its start: the case of a quantile that underflows to 0).
constexpr int kMaxQuantileSteps = 400;
template <typename Cdf, typename Sf, typename LogPdf, typename DLogPdf>
double SolveQuantile(double p, Cdf cdf, Sf sf, LogPdf log_pdf, DLogPdf dlog_pdf, double x,
                     double lo, double hi) {
  if (!(p > 0.0 && p < 1.0)) {
    if (p == 0.0) return lo;
    if (p == 1.0) return hi;
    return kNaN;
  }
  const bool upper = p > 0.5;
  const double target = upper ? 1.0 - p : p;
  auto g = [&](double v) { return upper ? target - sf(v) : cdf(v) - target; };
  double a = lo, b = hi;
  if (!(x > a && x < b))
    x = std::isfinite(a) && std::isfinite(b)
            ? 0.5 * (a + b)
            : (std::isfinite(a) ? a + 1.0 : (std::isfinite(b) ? b - 1.0 : 0.0));
  // Stopping. With r = |g(x)| / target the relative error of the tail at x, a Halley step leaves
  // r' ~ c r^3, where c is scale-free: 1/12 for a normal-like tail (a t with large dof, a gamma
  // with large shape, whatever their scale), (dof^2 - 1) / (12 dof^2) for the t's power tail,
  // (1 - a^2) / (12 a^2) for F ~ y^a near 0 (33 at shape 0.05, 8e4 at shape 0.001); Newton leaves
  // ~ r^2 / 2. So a Halley step taken from r <= kResidualDone leaves < 1e-16 in the tail for any
  // of these, and the iteration returns it without another evaluation if the step is also below
  // kHalleyDone relative (so that x itself, near the median where the tail says little about |x|,
  // is exact too: its error is then ~ step^3).
  // Otherwise a step below kNewtonDone relative ends the search. Near the root the step is ruled by
  // the rounding noise of F itself (up to ~1e-11 in p for the incomplete beta at large parameters)
  // and may point out of the bracket that same noise set; after a step below kNoiseFloor x that
  // means x is as good as F allows, where bisecting on would only move x around within the noise.
  constexpr double kResidualDone = 1e-7, kHalleyDone = 1e-5;
  constexpr double kNewtonDone = 1e-10, kNoiseFloor = 1e-8;
  double last_newton = kInf;  // relative size of the last Newton step, kInf after a bisection
  for (int i = 0; i < kMaxQuantileSteps; ++i) {
    const double gx = g(x);
    if (std::isnan(gx)) return kNaN;  // the distribution function failed (special_functions.h)
    if (gx == 0.0) return x;
    if (gx < 0.0)
      a = x;
    else
      b = x;
    const double density = std::exp(log_pdf(x));
    double step = gx / density;
    const double half_curve = 0.5 * step * dlog_pdf(x);
    const bool halley = std::fabs(half_curve) <= 0.5;
    if (halley) step /= 1.0 - half_curve;
    double next = x - step;
    // A step below rounding: x is the root as far as doubles go (it may sit on the bracket's end
    // that this very evaluation set, so the bracket test below would reject it).
    if (density > 0.0 && std::fabs(step) <= 2e-16 * std::fabs(x)) return x;
    if (density > 0.0 && std::isfinite(next) && next > a && next < b) {
      // Relative to the distance from the nearer end of the support too: near a finite end (a
      // beta quantile close to 1) the precision that matters is that of the distance to it.
      last_newton = std::fabs(next - x) / std::min({std::fabs(next), next - lo, hi - next});
      if (last_newton <= kNewtonDone) return next;
      if (halley && std::fabs(gx) <= kResidualDone * target && last_newton <= kHalleyDone)
        return next;
    } else {
      if (last_newton <= kNoiseFloor) return x;
      last_newton = kInf;
      if (std::isfinite(a) && std::isfinite(b)) {
        next = 0.5 * (a + b);
      } else if (std::isfinite(a)) {  // root above x, upper end open
        next = x + std::max(1.0, std::fabs(x));
      } else {  // root below x, lower end open
        next = x - std::max(1.0, std::fabs(x));
      }
    }
    if (std::fabs(next - x) <= 2e-16 * std::fabs(x) || next == x) return next;
    if (std::isfinite(a) && std::isfinite(b) && (b - a) <= 1e-300) return next;
    x = next;
  }
  // Not converged in kMaxQuantileSteps: x lies in a finite bracket that bisection has narrowed
  // (for a root at an end of the support that underflows, x is as close to it as doubles allow);
  // with an open end there is no such bound.
  return std::isfinite(a) && std::isfinite(b) ? x : kNaN;
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
    // Halley's error after a step is ~K step^3 with K = x^2 / 12 + 1/6 (up to ~120 for q >=
    // 1e-300).
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

namespace {

// Hill's normalizing expansion of the t distribution (G. W. Hill 1970, CACM Algorithm 395, from
// memory): with a = dof - 1/2, b = 48 a^2 and w = sqrt(a log(1 + t^2 / dof)), the normal score is
//   z = w + (w^3 + 3w) / b - (4w^7 + 33w^5 + 240w^3 + 855w) / (10 b (b + 0.8 w^4 + 100)).
// Returns z >= 0 for |t|. w is formed as |t| sqrt((a / dof) log1p(r) / r), r = t^2 / dof, so that
// it keeps full relative precision for tiny t and is t itself at infinite dof.
double HillNormalScore(double abs_t, double dof) {
  const double r = abs_t * abs_t / dof;
  const double log1p_r_over_r = r > 0.0 ? std::log1p(r) / r : 1.0;
  const double a = dof - 0.5;
  const double w = abs_t * std::sqrt((1.0 - 0.5 / dof) * log1p_r_over_r);
  const double b = 48.0 * a * a;
  const double w2 = w * w;
  return w + w * (w2 + 3.0) / b -
         w * (((4.0 * w2 + 33.0) * w2 + 240.0) * w2 + 855.0) /
             (10.0 * b * (b + 0.8 * w2 * w2 + 100.0));
}

// Cornish-Fisher expansion of the t quantile in powers of 1/dof (Abramowitz & Stegun 26.7.5, from
// memory), for the normal quantile z:
//   t = z + g1/dof + g2/dof^2 + g3/dof^3 + g4/dof^4,
//   g1 = (z^3 + z)/4, g2 = (5z^5 + 16z^3 + 3z)/96, g3 = (3z^7 + 19z^5 + 17z^3 - 15z)/384,
//   g4 = (79z^9 + 776z^7 + 1482z^5 - 1920z^3 - 945z)/92160.
double StudentTCornishFisher(double z, double dof) {
  const double z2 = z * z, n = 1.0 / dof;
  const double g1 = (z2 + 1.0) / 4.0;
  const double g2 = ((5.0 * z2 + 16.0) * z2 + 3.0) / 96.0;
  const double g3 = (((3.0 * z2 + 19.0) * z2 + 17.0) * z2 - 15.0) / 384.0;
  const double g4 = ((((79.0 * z2 + 776.0) * z2 + 1482.0) * z2 - 1920.0) * z2 - 945.0) / 92160.0;
  return z + z * n * (g1 + n * (g2 + n * (g3 + n * g4)));
}

}  // namespace

double StudentTNormalScore(double t, double dof) {
  if (std::isnan(t) || !(dof > 0.0)) return kNaN;
  if (t == 0.0) return t;
  const double abs_t = std::fabs(t);
  double z;  // >= 0, the score of |t|
  if (InHillRegion(abs_t, dof)) {
    z = HillNormalScore(abs_t, dof);
  } else {
    // The tail on t's own side, F(-|t|), keeps full relative precision where 1 - F would not.
    const double tail = StudentTCdf(-abs_t, dof);
    // From dof 50 (|t| <= 40) Hill's z is within 2e-5 of the score (1e-9 for |t| <= 10), so the
    // Halley steps of the normal quantile start from it: one step where NormalQuantile takes two.
    z = dof >= 50.0 && abs_t <= 40.0 && tail > 0.0
            ? -NormalLowerQuantileFrom(tail, -HillNormalScore(abs_t, dof))
            : -NormalQuantile(tail);
  }
  return t < 0.0 ? -z : z;
}

double StudentTNormalScoreClamped(double t, double dof) {
  const double z = StudentTNormalScore(t, dof);
  return z > kMaxNormalScore ? kMaxNormalScore : (z < -kMaxNormalScore ? -kMaxNormalScore : z);
}

namespace {
// StudentTQuantile for 0 < p < 1, dof > 0, without the memo.
double ComputeStudentTQuantile(double p, double dof) {
  const double z = NormalQuantile(p);
  const double x0 = StudentTCornishFisher(z, dof);
  // Direct where the expansion's relative tail error (measured against 40-digit mpmath on ~500
  // points: shrinking like dof^-5, below 5.3e-14 wherever dof >= 250 max(1, z^2)) is below 1e-13,
  // for |z| <= 10 (p >= 1e-23: beyond, the rounding of z itself, ~1e-15 relative, moves the tail by
  // z^2 times that, so the iteration on the exact tail is kept); and above kStudentTNormalDof at
  // any p, where the distribution function itself is the normal limit.
  if ((dof >= kStudentTCornishFisherDof * std::max(1.0, z * z) && std::fabs(z) <= 10.0) ||
      dof > kStudentTNormalDof)
    return x0;
  const double log_norm = -special::LogBeta(0.5 * dof, 0.5) - 0.5 * std::log(dof);
  // F(-|v|) for the iteration: as StudentTCdf, but from dof 20 the incomplete beta keeps its
  // central side I_x(1/2, dof/2), x = v^2 / (dof + v^2), up to twice its usual switch (|v| up to
  // ~2.5, covering the 0.025 and 0.975 quantiles): ~10 continued-fraction terms there against 20-46
  // on the tail side. The two-sided tail 1 - I_x is then >= 0.014 (t = 2.45 at dof ->
  // infinity, 2.51 at dof 20), so I_x's few ulps are below 3e-14 of it.
  const double side_scale = dof >= 20.0 ? 2.0 : 1.0;
  auto lower_tail = [dof, side_scale](double v) {
    if (std::isinf(v)) return 0.0;
    const double t2 = v * v, x = t2 / (dof + t2), y = dof / (dof + t2);
    return 0.5 * special::BetaIWithComplement(0.5, 0.5 * dof, x, y, true, side_scale);
  };
  return SolveQuantile(
      p, [&lower_tail](double v) { return v > 0 ? 1.0 - lower_tail(v) : lower_tail(v); },
      [&lower_tail](double v) { return v < 0 ? 1.0 - lower_tail(v) : lower_tail(v); },
      [dof, log_norm](double v) { return log_norm - 0.5 * (dof + 1) * std::log1p(v * v / dof); },
      [dof](double v) { return -(dof + 1) * v / (dof + v * v); }, x0, -kInf, kInf);
}
}  // namespace

double StudentTQuantile(double p, double dof) {
  if (!(dof > 0)) return kNaN;
  if (!(p > 0.0 && p < 1.0)) return p == 0.0 ? -kInf : (p == 1.0 ? kInf : kNaN);
  thread_local internal::QuantileMemo memo;
  double x;
  if (!memo.Find(p, dof, &x)) {
    x = ComputeStudentTQuantile(p, dof);
    memo.Store(p, dof, x);
  }
  return x;
}

double GammaLogPdf(double x, double shape, double rate) {
  if (!(shape > 0 && rate > 0)) return kNaN;
  if (x < 0) return -kInf;
  if (x == 0) return shape < 1 ? kInf : (shape == 1 ? std::log(rate) : -kInf);
  return shape * std::log(rate) + (shape - 1) * std::log(x) - rate * x - special::LogGamma(shape);
}

namespace {
// Wilson-Hilferty: (X / shape)^(1/3) is nearly N(1 - 1/(9 shape), 1/(9 shape)) for X ~ Gamma(shape,
// 1).
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

namespace {
// Cornish-Fisher expansion of the Gamma(shape, 1) quantile through the terms in shape^(-3/2) (from
// memory; its relative tail error, measured against 40-digit mpmath, shrinks like shape^-2 as the
// neglected terms say, confirming them): with the standardized cumulants g1 = 2 / sqrt(shape),
// g2 = 6 / shape, g3 = 24 / shape^(3/2) and the normal quantile z,
//   w = z + g1 (z^2 - 1)/6 + g2 (z^3 - 3z)/24 - g1^2 (2z^3 - 5z)/36 + g3 (z^4 - 6z^2 + 3)/120
//         - g1 g2 (z^4 - 5z^2 + 2)/24 + g1^3 (12z^4 - 53z^2 + 17)/324,
//   y = shape + sqrt(shape) w.
double GammaCornishFisher(double z, double shape) {
  const double r = 1.0 / std::sqrt(shape), z2 = z * z;
  const double g1 = 2.0 * r, g2 = 6.0 * r * r, g3 = 24.0 * r * r * r;
  const double w = z + g1 * (z2 - 1.0) / 6.0 + g2 * (z2 - 3.0) * z / 24.0 -
                   g1 * g1 * (2.0 * z2 - 5.0) * z / 36.0 + g3 * ((z2 - 6.0) * z2 + 3.0) / 120.0 -
                   g1 * g2 * ((z2 - 5.0) * z2 + 2.0) / 24.0 +
                   g1 * g1 * g1 * ((12.0 * z2 - 53.0) * z2 + 17.0) / 324.0;
  return shape + w / r;
}
}  // namespace

namespace {
// The Gamma(shape, 1) quantile for 0 < p < 1, shape > 0, without the memo.
double ComputeGammaQuantile(double p, double shape) {
  const double z = NormalQuantile(p);
  // Direct where the expansion's relative tail error (measured ~7e-3 |z|^5 / shape^2) is below
  // 2e-14: shape^4 >= 1.2e23 max(1, z^2)^5 (shape >= 5.9e5 for |z| <= 1, 3.2e6 at p = 0.975);
  // and above kGammaWilsonHilfertyShape at any p (its error there, < 1e-16 |z|^5, is far below
  // that of the Wilson-Hilferty cube root used before).
  const double y_cf = GammaCornishFisher(z, shape);
  const double s = std::max(1.0, z * z), s2 = s * s, shape2 = shape * shape;
  if (y_cf > 0 && (shape > kGammaWilsonHilfertyShape || shape2 * shape2 >= 1.2e23 * s2 * s2 * s))
    return y_cf;
  // Start of the iteration: the expansion from shape 20 (its relative tail error is ~1e-6 at shape
  // 300 and p = 0.025, below 1e-7 from shape 1e4 for 1e-6 <= p <= 1 - 1e-6, where one evaluation
  // of P then suffices); below, the Wilson-Hilferty cube root, or for the lower tail at small shape
  // P(shape, y) ~ y^shape / Gamma(shape + 1), y -> 0.
  double y0 = y_cf;
  if (!(shape >= 20.0 && y_cf > 0)) {
    const double v = 1.0 / (9.0 * shape);
    const double c = 1.0 - v + z * std::sqrt(v);
    y0 = c > 0 ? shape * c * c * c : shape * 1e-3;
    const double y_small = std::exp((std::log(p) + special::LogGamma(shape + 1.0)) / shape);
    if ((shape < 1.0 || c <= 0) && y_small < 1.0) y0 = y_small;
  }
  const double log_gamma = special::LogGamma(shape);
  const double y = SolveQuantile(
      p, [shape](double y) { return special::GammaP(shape, y); },
      [shape](double y) { return special::GammaQ(shape, y); },
      [shape, log_gamma](double y) {
        return y > 0 ? (shape - 1) * std::log(y) - y - log_gamma : GammaLogPdf(y, shape, 1.0);
      },
      [shape](double y) { return (shape - 1) / y - 1.0; }, y0, 0.0, kInf);
  return y;
}
}  // namespace

double GammaQuantile(double p, double shape, double rate) {
  if (!(shape > 0 && rate > 0)) return kNaN;
  if (!(p > 0.0 && p < 1.0)) return p == 0.0 ? 0.0 : (p == 1.0 ? kInf : kNaN);
  thread_local internal::QuantileMemo memo;
  double y;
  if (!memo.Find(p, shape, &y)) {
    y = ComputeGammaQuantile(p, shape);
    memo.Store(p, shape, y);
  }
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
  const double log_beta = special::LogBeta(a, b);
  return SolveQuantile(
      p, [a, b](double x) { return BetaCdf(x, a, b); },
      [a, b](double x) { return special::BetaIWithComplement(a, b, x, 1.0 - x, true); },
      [a, b, log_beta](double x) {
        return x > 0 && x < 1 ? (a - 1) * std::log(x) + (b - 1) * std::log1p(-x) - log_beta
                              : BetaLogPdf(x, a, b);
      },
      [a, b](double x) { return (a - 1) / x - (b - 1) / (1 - x); }, x0, 0.0, 1.0);
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
