// Building blocks of the exact scores (exact_scores.h): the tail probabilities of the conditional
// laws they use, the randomized normal score of a discrete observation, and a counter-based uniform
// stream for its randomization.
//
// PointTails of a value y under a law Y: below = P(Y < y), at = P(Y = y), above = P(Y > y). The
// tail on y's own side of the centre (the smaller one) is computed directly, at full relative
// precision; the other as 1 - that tail - at (absolute precision, which suffices: it is the big
// one). A continuous law has at = 0.
//
// Randomized probability integral transform (discrete laws): with V ~ U(0, 1) independent of Y,
//   u = P(Y < y) + V P(Y = y)  ~ U(0, 1) exactly,   z = Phi^{-1}(u) ~ N(0, 1).
// z is computed from the smaller of u and 1 - u = P(Y > y) + (1 - V) P(Y = y), so both tails keep
// full relative precision; a u that underflows to 0 gives -+dist::kMaxNormalScore (finite, so a
// gross outlier still feeds a chart).
//
// Costs and accuracy (NaN on failure, as the special functions; callers skip a NaN score):
//   BinomialTails  one incomplete beta (special::BetaIWithComplement: a continued fraction of at
//                  most 100000 terms) and one log-gamma pmf.
//   PoissonTails   one incomplete gamma and one pmf.
//   BetaTails      one incomplete beta.
//   HypergeometricTails  the pmf at y from log-gammas (relative error about 1e-16 times
//                  log Gamma(population), e.g. 2e-8 at a population of 1e7), then the tail on y's
//                  side summed outward from y by the term ratio. The law is log-concave, so past
//                  the mode the ratios shrink and the sum stops once the geometric bound on what is
//                  left falls below 1e-17 of the sum: about |y - mode| + 9 sd terms, sd <=
//                  sqrt(draws)/2 (O(sqrt(draws)) for an in-control y), never more than draws + 1
//                  and never more than kMaxHypergeometricTerms (beyond it: NaN).
#pragma once

#include <cstdint>

namespace bayline::est {

struct PointTails {
  double below = 0.0;  // P(Y < y)
  double at = 0.0;     // P(Y = y)
  double above = 0.0;  // P(Y > y)
};

inline constexpr double kMaxHypergeometricTerms = 1e6;

// The counter-th value of a uniform stream keyed by seed: splitmix64 (Steele, Lea and Flood 2014)
// of seed + (counter + 1) * golden gamma, its top 53 bits mapped to (0, 1) (never 0 or 1). Pure
// integer arithmetic, so identical on every platform and standard library.
double CounterUniform(uint64_t seed, uint64_t counter);

// z = Phi^{-1}(below + v at), from the smaller tail as above; v in (0, 1). NaN if a tail is NaN.
double RandomizedNormalScore(const PointTails& t, double v);

// Y ~ Binomial(n, p), integer 0 <= y <= n, q = 1 - p given separately (callers that know it more
// precisely than 1 - p pass it). NaN tails on invalid arguments.
PointTails BinomialTails(double y, double n, double p, double q);
// Y ~ Poisson(mean), integer y >= 0, mean >= 0.
PointTails PoissonTails(double y, double mean);
// Y ~ Hypergeometric: `draws` items drawn without replacement from `population` items of which
// `successes` are successes; y successes drawn. Integers, 0 <= successes, draws <= population.
PointTails HypergeometricTails(double y, double population, double successes, double draws);
// Y ~ Beta(a, b) at x, with xc = 1 - x given separately. a, b > 0, 0 <= x <= 1.
PointTails BetaTails(double x, double xc, double a, double b);
// Y ~ Gamma(shape, rate) at y >= 0.
PointTails GammaTails(double y, double shape, double rate);

}  // namespace bayline::est
