// Special functions used by the distributions and the estimators.
//
// Accuracy: about 1e-14 relative over the ranges the estimators use; see
// tests/reference/core (checked against scipy.special). Arguments outside a function's domain give
// NaN (these are internal building blocks; callers validate user input first).
#pragma once

namespace bayline::est::special {

// log Gamma(a), a > 0.
double LogGamma(double a);
// log B(a, b) = log Gamma(a) + log Gamma(b) - log Gamma(a + b), a, b > 0.
double LogBeta(double a, double b);
// psi(a) = d/da log Gamma(a), a > 0.
double Digamma(double a);
// psi'(a), a > 0.
double Trigamma(double a);
// Regularized lower incomplete gamma P(a, x) = gamma(a, x) / Gamma(a), a > 0, x >= 0.
double GammaP(double a, double x);
// Regularized upper incomplete gamma Q(a, x) = 1 - P(a, x), computed without cancellation.
double GammaQ(double a, double x);
// Regularized incomplete beta I_x(a, b), a, b > 0, 0 <= x <= 1.
double BetaI(double a, double b, double x);
// I_x(a, b) (complement = false) or 1 - I_x(a, b) (complement = true), given both x and y = 1 - x
// so that callers who know y more precisely than 1 - x keep it; the small one of the two results
// keeps full relative precision.
double BetaIWithComplement(double a, double b, double x, double y, bool complement);

}  // namespace bayline::est::special
