// Densities, distribution functions and quantiles of the distributions the estimators publish
// intervals from. Parameterisations:
//   Normal(mean, sd); StudentT(dof) standard (location 0, scale 1); ChiSquared(k);
//   Gamma(shape, rate) with mean shape / rate; Beta(a, b); Poisson(mean); Binomial(n, p).
// Quantiles solve F(x) = p by safeguarded Newton iteration on the distribution function (the upper
// tail is used for p > 1/2, so both tails keep full relative precision). p must be in (0, 1).
#pragma once

namespace bayline::est::dist {

double NormalLogPdf(double x, double mean = 0.0, double sd = 1.0);
double NormalCdf(double z);          // standard normal
double NormalSf(double z);           // 1 - NormalCdf(z), accurate in the upper tail
double NormalQuantile(double p);     // standard normal
// Phi^{-1}(q) for a lower tail 0 < q <= 1/2 from a caller's start x0 <= 0 near it (say within 1e-3
// relative): the Halley steps of NormalQuantile, ending after the first step below 1e-7 min(1, |x|)
// (cubic convergence leaves < 1e-19 after it), so one step when x0 is that good; at most four.
double NormalLowerQuantileFrom(double q, double x0);

double StudentTLogPdf(double t, double dof);
double StudentTCdf(double t, double dof);
double StudentTQuantile(double p, double dof);

double ChiSquaredCdf(double x, double k);
double ChiSquaredQuantile(double p, double k);

double GammaLogPdf(double x, double shape, double rate);
double GammaCdf(double x, double shape, double rate);
double GammaQuantile(double p, double shape, double rate);

double BetaLogPdf(double x, double a, double b);
double BetaCdf(double x, double a, double b);
double BetaQuantile(double p, double a, double b);

// log P(Y = y), y >= 0 (non-integer y uses the continuous extension via LogGamma).
double PoissonLogPmf(double y, double mean);
double BinomialLogPmf(double y, double n, double p);

}  // namespace bayline::est::dist
