// Coverage by simulation of nominal 95% Wald intervals, 10,000 seeded replicates each.
// With 10,000 replicates the Monte Carlo sd of a coverage near 0.95 is 0.0022, so the +-0.01 band
// is 4.5 sd wide. The sample sizes are chosen so the Wald approximation is honest; the exact
// coverages quoted were computed with scipy.stats 1.10 (python3-scipy) by summing the pmf (or the t
// distribution for the gaussian mean) over the outcomes whose interval covers the truth.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <random>

#include "estimators/ml/binomial_ml.h"
#include "estimators/ml/gaussian_ml.h"
#include "estimators/ml/poisson_ml.h"

namespace bayline::est {
namespace {

constexpr int kReplicates = 10000;

bool Covers(const ParameterReport& r, double truth) {
  return r.identifiable && r.lower[0] <= truth && truth <= r.upper[0];
}

TEST(WaldCoverageTest, GaussianMeanAtN200) {
  // Exact coverage of mean +- z sqrt(variance_ml / n) at n = 200: P(|t_199| <= 1.95996
  // sqrt(199/200)) = 0.9480 (scipy.stats.t). At n = 50 it would be 0.9419, outside the band.
  std::mt19937_64 rng(71);
  std::normal_distribution<double> nd(3.0, 2.0);
  int covered = 0;
  for (int rep = 0; rep < kReplicates; ++rep) {
    GaussianMl g;
    for (int i = 0; i < 200; ++i) {
      Sample s;
      s.y = nd(rng);
      ASSERT_TRUE(g.Update(s).ok());
    }
    covered += Covers(g.Report(0.95), 3.0);
  }
  const double coverage = static_cast<double>(covered) / kReplicates;
  std::printf("gaussian mean n=200 coverage %.4f\n", coverage);
  EXPECT_NEAR(coverage, 0.95, 0.01);
}

TEST(WaldCoverageTest, PoissonRateAtN200) {
  // rate 2, 200 unit exposures (expected total count 400). Exact coverage 0.9508
  // (scipy.stats.poisson).
  std::mt19937_64 rng(72);
  std::poisson_distribution<int> pd(2.0);
  int covered = 0;
  for (int rep = 0; rep < kReplicates; ++rep) {
    PoissonMl p;
    for (int i = 0; i < 200; ++i) {
      Sample s;
      s.y = pd(rng);
      ASSERT_TRUE(p.Update(s).ok());
    }
    covered += Covers(p.Report(0.95), 2.0);
  }
  const double coverage = static_cast<double>(covered) / kReplicates;
  std::printf("poisson rate n=200 coverage %.4f\n", coverage);
  EXPECT_NEAR(coverage, 0.95, 0.01);
}

TEST(WaldCoverageTest, BinomialProbabilityAt500Trials) {
  // p = 0.3 over 500 Bernoulli trials streamed as 100 observations of 5 trials. Exact coverage
  // 0.9490 (scipy.stats.binom); at 200 trials it is 0.9440, too close to the edge of the band.
  std::mt19937_64 rng(73);
  std::binomial_distribution<int> bd(5, 0.3);
  int covered = 0;
  for (int rep = 0; rep < kReplicates; ++rep) {
    BinomialMl b;
    for (int i = 0; i < 100; ++i) {
      Sample s;
      s.y = bd(rng);
      s.trials = 5;
      ASSERT_TRUE(b.Update(s).ok());
    }
    covered += Covers(b.Report(0.95), 0.3);
  }
  const double coverage = static_cast<double>(covered) / kReplicates;
  std::printf("binomial probability 500 trials coverage %.4f\n", coverage);
  EXPECT_NEAR(coverage, 0.95, 0.01);
}

}  // namespace
}  // namespace bayline::est
