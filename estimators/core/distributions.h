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
