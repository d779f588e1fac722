// Special functions used by the distributions and the estimators.
//
// Accuracy: about 1e-14 relative over the ranges the estimators use; see
// tests/reference/core (checked against scipy.special). Arguments outside a function's domain give
// NaN (these are internal building blocks; callers validate user input first).
//
// Every function ends after a bounded amount of work, whatever its arguments (NaN, 1e-300, 1e300,
// infinities). The iterative ones (GammaP, GammaQ, BetaI, BetaIWithComplement: a series or a
// continued fraction) stop after at most 100000 terms; when a sum or fraction has not converged
// by then, or turns non-finite on the way (parameters near the largest double), the result is NaN:
// the documented failure result, which callers must treat as "no value". Digamma and Trigamma
// shift the argument upward at most 12 times. Results that are probabilities lie in [0, 1] or are
// NaN. With both beta parameters above about 1e10 the rounding of the log prefactor
// (~ a * 1e-16) limits I_x to about 1e-6 absolute (1e-4 at 1e13): usable for intervals, not more.
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
// As above, but the continued fraction for I_x itself (rather than for its complement) is used
// while x < x_side_scale (a + 1) / (a + b + 2) instead of x_side_scale = 1: with x_side_scale > 1
// fewer terms are needed just past that switch (for the t distribution's a = 1/2 at scale 2, about
// 10 against 20-46), but a complement taken there is 1 - I_x, with its absolute error.
double BetaIWithComplement(double a, double b, double x, double y, bool complement,
                           double x_side_scale);

}  // namespace bayline::est::special
