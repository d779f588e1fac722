// The gamma shape equation of maximum likelihood.
//
// For y_i ~ Gamma(shape k, rate r) with weights a_i, the ML equations reduce to
//   r = k / ybar   and   g(k) = log k - psi(k) = s,   s = log(ybar) - mean(log y) >= 0,
// where ybar and mean(log y) are a-weighted means (s = 0 only when all y are equal: then k -> inf).
// g is positive, strictly decreasing and convex from +inf (k -> 0) to 0 (k -> inf), so the root is
// unique. It is found by Newton's method in t = log k (h(t) = g(e^t) - s is convex and decreasing,
// so Newton converges monotonically after the first step), started from the closed-form
// approximation k0 = (3 - s + sqrt((s - 3)^2 + 24 s)) / (12 s) (good to about 1.5%; it inverts the
// first terms of g(k) ~ 1/(2k) + 1/(12 k^2)), or from a caller's warm start. A bracket kept from
// the signs of h replaces any step that would leave it by bisection in log k.
// For k >= 10, g and g' are evaluated from their asymptotic series instead of log k - psi(k), which
// would lose digits to cancellation when k is large (s small).
#pragma once

namespace bayline::est::gamma_shape {

// g(k) = log k - psi(k), k > 0.
double G(double k);
// g'(k) = 1/k - psi'(k) (< 0), k > 0.
double GPrime(double k);
// k * psi'(k) - 1 = -k g'(k) (> 0): the determinant factor of the gamma Fisher information.
double InformationFactor(double k);
// The closed-form starting value above; s > 0.
double StartingValue(double s);
// The root of g(k) = s. s must be finite and > 0, else NaN. `warm_start` (> 0 finite) replaces the
// closed-form start when given. Converges to about 1e-15 relative within a few iterations.
double Solve(double s, double warm_start = 0.0);

}  // namespace bayline::est::gamma_shape
