// score_tails_probe: the conditional laws behind the exact scores (score_tails.h, exact_scores.h),
// for the scipy reference test (test_score_tails_vs_scipy.py). stdin, one query per line:
//   binom y n p | pois y mean | hyper y population successes draws | beta x a b | gamma y shape
//   rate
//     -> "below at above" (P(Y < y), P(Y = y), P(Y > y))
//   stream family count  then `count` lines "y aux" (aux: exposure for poisson, trials for
//   binomial, ignored otherwise; family poisson | binomial | exponential | gamma)
//     -> one line per observation "z v" (v: the uniform used, NaN for continuous families)
// Values printed with %.17g.
#include <cstdio>
#include <iostream>
#include <string>

#include "estimators/core/report.h"
#include "estimators/detect/exact_scores.h"
#include "estimators/detect/score_tails.h"

using namespace bayline::est;

int main() {
  std::string kind;
  while (std::cin >> kind) {
    PointTails t{kNaN, kNaN, kNaN};
    if (kind == "binom") {
      double y, n, p;
      std::cin >> y >> n >> p;
      t = BinomialTails(y, n, p, 1.0 - p);
    } else if (kind == "pois") {
      double y, mean;
      std::cin >> y >> mean;
      t = PoissonTails(y, mean);
    } else if (kind == "hyper") {
      double y, population, successes, draws;
      std::cin >> y >> population >> successes >> draws;
      t = HypergeometricTails(y, population, successes, draws);
    } else if (kind == "beta") {
      double x, a, b;
      std::cin >> x >> a >> b;
      t = BetaTails(x, 1.0 - x, a, b);
    } else if (kind == "gamma") {
      double y, shape, rate;
      std::cin >> y >> shape >> rate;
      t = GammaTails(y, shape, rate);
    } else if (kind == "stream") {
      std::string family;
      int count = 0;
      std::cin >> family >> count;
      ExactScoreOptions o;
      o.family = family == "poisson"       ? ScoreFamily::kPoisson
                 : family == "binomial"    ? ScoreFamily::kBinomial
                 : family == "exponential" ? ScoreFamily::kExponential
                                           : ScoreFamily::kGamma;
      const uint64_t seed = 2024;
      ExactScoreStandardizer s(o, seed);
      for (int i = 0; i < count; ++i) {
        Sample smp;
        double aux = 1;
        std::cin >> smp.y >> aux;
        if (o.family == ScoreFamily::kPoisson) smp.exposure = aux;
        if (o.family == ScoreFamily::kBinomial) smp.trials = aux;
        const double draws = s.state().draws;
        double z = kNaN;
        if (!s.Update(smp, kNaN, &z).ok()) return 3;
        const double v =
            s.state().draws > draws ? CounterUniform(seed, static_cast<uint64_t>(draws)) : kNaN;
        std::printf("%.17g %.17g\n", z, v);
      }
      continue;
    } else {
      return 2;
    }
    std::printf("%.17g %.17g %.17g\n", t.below, t.at, t.above);
  }
  return 0;
}
