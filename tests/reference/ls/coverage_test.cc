// Coverage by simulation: under normal errors the t intervals of least squares are exact (any
// regression text, e.g. the standard result (theta_j - theta_hat_j) / se_j ~ t_{n-p}; REFERENCES.md
// standard identities), so nominal 95% intervals must cover the truth in 95% +/- 1% of replicates.
// 20,000 replicates: the binomial sd of the coverage is 0.15%, so +/- 1% is about 6.5 sd.
#include <gtest/gtest.h>

#include <cstdio>
#include <random>
#include <vector>

#include "estimators/ls/recursive_least_squares.h"
#include "estimators/ls/rls.h"

namespace bayline::est {
namespace {

TEST(RlsCoverageTest, NominalNinetyFivePercentIntervalsCoverTheTruth) {
  constexpr int kReplicates = 20000, kN = 15, kP = 3;
  const double theta[kP] = {2.0, -1.0, 0.5};
  std::mt19937_64 rng(20261202);
  std::normal_distribution<double> g;
  int covered[kP] = {0, 0, 0};
  int predicted = 0;
  double x[kP];
  Sample s;
  s.x = std::span<const double>(x, kP);
  for (int r = 0; r < kReplicates; ++r) {
    RecursiveLeastSquares<kP> est;
    for (int i = 0; i < kN; ++i) {
      x[0] = 1.0;
      x[1] = g(rng);
      x[2] = 3.0 * g(rng);
      s.y = theta[0] * x[0] + theta[1] * x[1] + theta[2] * x[2] + 0.8 * g(rng);
      ASSERT_TRUE(est.Update(s).ok());
    }
    const ParameterReport rep = est.Report(0.95);
    for (int j = 0; j < kP; ++j) {
      const auto k = static_cast<std::size_t>(j);
      covered[j] += rep.lower[k] <= theta[j] && theta[j] <= rep.upper[k];
    }
    // Prediction interval for a new observation at a new x.
    const std::vector<double> x0 = {1.0, g(rng), 3.0 * g(rng)};
    const double y0 = theta[0] + theta[1] * x0[1] + theta[2] * x0[2] + 0.8 * g(rng);
    Prediction pr;
    ASSERT_TRUE(est.Predict(x0, 0.95, &pr).ok());
    predicted += pr.lower <= y0 && y0 <= pr.upper;
  }
  for (int j = 0; j < kP; ++j) {
    const double coverage = static_cast<double>(covered[j]) / kReplicates;
    std::printf("coverage of coefficient %d: %.4f\n", j, coverage);
    EXPECT_NEAR(coverage, 0.95, 0.01) << "coefficient " << j;
  }
  std::printf("coverage of the prediction interval: %.4f\n",
              static_cast<double>(predicted) / kReplicates);
  EXPECT_NEAR(static_cast<double>(predicted) / kReplicates, 0.95, 0.01);
}

}  // namespace
}  // namespace bayline::est
