// Densities, distribution functions and quantiles of the distributions the estimators publish
// intervals from. Parameterisations:
//   Normal(mean, sd); StudentT(dof) standard (location 0, scale 1); ChiSquared(k);
//   Gamma(shape, rate) with mean shape / rate; Beta(a, b); Poisson(mean); Binomial(n, p).
// Quantiles solve F(x) = p by safeguarded Halley iteration on the distribution function (the upper
// tail is used for p > 1/2, so both tails keep full relative precision), started from an asymptotic
// expansion (Cornish-Fisher for t and gamma, else the normal); where that expansion alone is as
// accurate as the iteration (relative tail error below 1e-13, measured against 40-digit mpmath in
// tests/reference/core) it is returned directly. StudentTQuantile and GammaQuantile keep what they
// computed in a small per-thread memo (core/quantile_memo.h), since reports of many channels ask
// for the same (p, dof): a repeated call returns the identical value without the iteration.
// p must be in [0, 1] (0 and 1 give the ends of the support).
// Failure result: every function ends after a bounded amount of work (special_functions.h; the
// quantile iteration takes at most 400 steps) and returns NaN when its parameters are outside the
// domain or when the computation fails (a special function's NaN, an iteration that does not
// converge: e.g. a beta or gamma with a parameter near 1e300). Callers treat NaN as "no value".
#pragma once

namespace bayline::est::dist {

double NormalLogPdf(double x, double mean = 0.0, double sd = 1.0);
double NormalCdf(double z);       // standard normal
double NormalSf(double z);        // 1 - NormalCdf(z), accurate in the upper tail
double NormalQuantile(double p);  // standard normal
// Phi^{-1}(q) for a lower tail 0 < q <= 1/2 from a caller's start x0 <= 0 near it (say within 1e-3
// relative): the Halley steps of NormalQuantile, ending after the first step below 1e-7 min(1, |x|)
// (cubic convergence leaves < 1e-19 after it), so one step when x0 is that good; at most four.
double NormalLowerQuantileFrom(double q, double x0);

double StudentTLogPdf(double t, double dof);
double StudentTCdf(double t, double dof);
// Direct Cornish-Fisher expansion in 1/dof (4 terms) where dof >= 250 max(1, z^2) and |z| <= 10,
// z = Phi^-1(p) (relative tail error < 1e-13), and above dof 1e7.
double StudentTQuantile(double p, double dof);
// z = Phi^{-1}(F_t(t; dof)), the normal score of a Student t value: odd in t, |z| at full relative
// precision in both tails (computed from the tail on t's own side). Where |t| <= 1, 2, 3, 6, 10,
// 40 at dof >= 20, 30, 50, 100, 200, 1e4 respectively it is Hill's normalizing expansion
// (G. W. Hill 1970, CACM Algorithm 395), with |error| < 1.6e-11 there (measured against 45-digit
// mpmath; < 4e-14 from dof 1e4); elsewhere Phi^{-1} of the exact tail F_t(-|t|). NaN when
// dof <= 0 or t is NaN; +-infinity when that tail underflows (|z| > 38.4).
double StudentTNormalScore(double t, double dof);
// The normal score of the smallest positive double is about -38.4: a score whose tail underflows is
// beyond it. StudentTNormalScoreClamped reports such scores as +-kMaxNormalScore, more extreme than
// any representable score yet finite, so that a chart fed with scores counts a gross outlier
// instead of skipping a non-finite value. NaN as StudentTNormalScore.
inline constexpr double kMaxNormalScore = 38.5;
double StudentTNormalScoreClamped(double t, double dof);

double ChiSquaredCdf(double x, double k);
double ChiSquaredQuantile(double p, double k);

double GammaLogPdf(double x, double shape, double rate);
double GammaCdf(double x, double shape, double rate);
// Direct Cornish-Fisher expansion (terms through shape^-3/2) where shape^4 >= 1.2e23 max(1, z^2)^5
// (relative tail error < 2e-14), and at any p above shape 1e7.
double GammaQuantile(double p, double shape, double rate);

double BetaLogPdf(double x, double a, double b);
double BetaCdf(double x, double a, double b);
double BetaQuantile(double p, double a, double b);

// log P(Y = y), y >= 0 (non-integer y uses the continuous extension via LogGamma).
double PoissonLogPmf(double y, double mean);
double BinomialLogPmf(double y, double n, double p);

}  // namespace bayline::est::dist
