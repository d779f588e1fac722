#include "estimators/detect/self_starting.h"

#include <gtest/gtest.h>

#include <cmath>
#include <numbers>
#include <random>
#include <vector>

#include "estimators/core/distributions.h"

namespace bayline::est {
namespace {

TEST(ChartsSelfStartingTest, FirstTwoObservationsGiveNoValue) {
  SelfStartingStandardizer s;
  double z = 0;
  ASSERT_TRUE(s.Update(1.0, &z).ok());
  EXPECT_TRUE(std::isnan(z));
  ASSERT_TRUE(s.Update(2.0, &z).ok());
  EXPECT_TRUE(std::isnan(z));
  ASSERT_TRUE(s.Update(5.0, &z).ok());
  EXPECT_TRUE(std::isfinite(z));
}

TEST(ChartsSelfStartingTest, ThirdValueMatchesTheCauchyClosedForm) {
  // n = 3: T ~ t with 1 dof (Cauchy), F(t) = 1/2 + atan(t) / pi (standard identity).
  const double y1 = 1.0, y2 = 2.0;
  for (double y3 : {-40.0, -3.0, 0.7, 1.5, 2.2, 9.0, 300.0}) {
    SelfStartingStandardizer s;
    double z = 0;
    ASSERT_TRUE(s.Update(y1, &z).ok());
    ASSERT_TRUE(s.Update(y2, &z).ok());
    ASSERT_TRUE(s.Update(y3, &z).ok());
    const double sd = std::sqrt(0.5);  // sample sd of {1, 2}
    const double t = (y3 - 1.5) / (sd * std::sqrt(1.5));
    const double p = 0.5 + std::atan(t) / std::numbers::pi;
    const double expected = t < 0 ? dist::NormalQuantile(p)
                                  : -dist::NormalQuantile(std::atan(1 / t) / std::numbers::pi);
    EXPECT_NEAR(z, expected, 1e-9 * (1 + std::fabs(expected))) << y3;
  }
}

TEST(ChartsSelfStartingTest, InvariantToLocationAndScale) {
  SelfStartingStandardizer a, b;
  std::mt19937_64 rng(12);
  std::normal_distribution<double> normal(0.0, 1.0);
  for (int i = 0; i < 200; ++i) {
    const double y = normal(rng);
    double za = 0, zb = 0;
    ASSERT_TRUE(a.Update(y, &za).ok());
    ASSERT_TRUE(b.Update(1e4 + 37.5 * y, &zb).ok());
    if (i >= 2) {
      ASSERT_NEAR(za, zb, 1e-8 * (1 + std::fabs(za))) << i;
    }
  }
}

TEST(ChartsSelfStartingTest, ValuesAreStandardNormalAndUncorrelatedAtEveryIndex) {
  // Across 20000 seeded sequences with unknown mean 50 and sd 7, z_n at each n = 3..12 must have
  // mean 0 and variance 1, and z_3, z_4 no correlation (Hawkins 1987: the values are i.i.d. N(0,
  // 1)).
  const int reps = 20000, len = 12;
  std::mt19937_64 rng(2024);
  std::normal_distribution<double> normal(50.0, 7.0);
  std::vector<double> sum(len + 1, 0), sum2(len + 1, 0);
  double cross = 0;
  for (int r = 0; r < reps; ++r) {
    SelfStartingStandardizer s;
    double prev = 0;
    for (int n = 1; n <= len; ++n) {
      double z = 0;
      ASSERT_TRUE(s.Update(normal(rng), &z).ok());
      if (n >= 3) {
        sum[n] += z;
        sum2[n] += z * z;
        if (n == 4) cross += z * prev;
        prev = z;
      }
    }
  }
  for (int n = 3; n <= len; ++n) {
    const double mean = sum[n] / reps, var = sum2[n] / reps - mean * mean;
    EXPECT_NEAR(mean, 0.0, 4.0 / std::sqrt(reps)) << n;       // 4 standard errors
    EXPECT_NEAR(var, 1.0, 4.0 * std::sqrt(2.0 / reps)) << n;  // 4 standard errors
  }
  EXPECT_NEAR(cross / reps, 0.0, 4.0 / std::sqrt(reps));
}

TEST(ChartsSelfStartingTest, TailsKeepPrecisionAndSymmetry) {
  for (double dof : {1.0, 3.0, 30.0}) {
    for (double t : {0.5, 5.0, 50.0, 1e4}) {
      const double z = dist::StudentTNormalScore(t, dof);
      EXPECT_EQ(dist::StudentTNormalScore(-t, dof), -z);
      EXPECT_GT(z, 0.0);
      EXPECT_TRUE(std::isfinite(z));
    }
  }
  EXPECT_NEAR(dist::StudentTNormalScore(2.0, 1e8), 2.0, 1e-6);  // t -> normal for large dof
  EXPECT_TRUE(std::isnan(dist::StudentTNormalScore(1.0, 0.0)));
}

// The standardizer's score is dist::StudentTNormalScore: Hill's expansion for |t| <= 1, 2, 3, 6,
// 10, 40 at dof >= 20, 30, 50, 100, 200, 1e4, Phi^{-1} of the exact tail elsewhere (from dof 50
// with one Halley step from Hill's z).
// Both must agree with the generic NormalQuantile of the same exact tail: on the expansion's side
// within its bound of 1.6e-11 (tests/reference/core checks it against mpmath), elsewhere to
// rounding (near z = 0 that is absolute: the tail 1/2 - O(z) holds z only to ~ulp(1/2) / phi(0) =
// 3e-16). Not beyond dof 1e6: there the incomplete beta behind the generic value is off by up to
// 1e-10 in z itself (at dof 1e7, t = 1.9), so it is no reference; tests/reference/core checks
// against mpmath.
TEST(ChartsSelfStartingTest, ScoreAgreesWithGenericNormalQuantileOfTheExactTail) {
  for (double dof : {3.0, 20.0, 30.0, 49.0, 50.0, 100.0, 199.0, 200.0, 1e3, 1e4, 3.3e4, 1e5, 1e6}) {
    for (double t : {1e-6, 0.01, 0.3, 1.0, 1.9, 2.9, 4.0, 5.9, 9.0, 10.0, 10.5, 20.0, 37.0}) {
      const double generic = -dist::NormalQuantile(dist::StudentTCdf(-t, dof));
      const double step = dof >= 1e4     ? 40.0
                          : dof >= 200.0 ? 10.0
                          : dof >= 100.0 ? 6.0
                          : dof >= 50.0  ? 3.0
                          : dof >= 30.0  ? 2.0
                          : dof >= 20.0  ? 1.0
                                         : -1.0;
      const bool expansion = t <= step;
      const double tol = expansion ? 1.6e-11 + 4e-15 * generic : 4e-15 * generic + 4e-16;
      EXPECT_NEAR(dist::StudentTNormalScore(t, dof), generic, tol) << "t " << t << " dof " << dof;
    }
  }
}

// A gross outlier on an old channel: its t tail underflows the double range, and the score is the
// finite +-kMaxNormalScore (a chart counts it) rather than an infinity the charts would skip.
TEST(ChartsSelfStartingTest, UnderflowingTailGivesTheLargestFiniteScore) {
  SelfStartingStandardizer s;
  double z = 0;
  for (int i = 0; i < 5000; ++i) ASSERT_TRUE(s.Update(std::sin(0.7 * i), &z).ok());
  ASSERT_TRUE(s.Update(1e6, &z).ok());
  EXPECT_EQ(z, dist::kMaxNormalScore);
  ASSERT_TRUE(s.Update(-1e6, &z).ok());
  EXPECT_EQ(z, -dist::kMaxNormalScore);
  EXPECT_TRUE(std::isinf(dist::StudentTNormalScore(1e6, 5000.0)));  // the unclamped score
  EXPECT_EQ(StandardizeRecursiveResidual(1e6, 1.0, 5000.0), dist::kMaxNormalScore);
  EXPECT_EQ(dist::StudentTNormalScoreClamped(3.0, 30.0), dist::StudentTNormalScore(3.0, 30.0));
}

TEST(ChartsSelfStartingTest, RejectsNonFiniteAndKeepsState) {
  SelfStartingStandardizer s;
  double z = 0;
  ASSERT_TRUE(s.Update(1.0, &z).ok());
  ASSERT_TRUE(s.Update(3.0, &z).ok());
  const auto before = s.state();
  EXPECT_EQ(s.Update(std::nan(""), &z).code(), ErrorCode::kNonFinite);
  EXPECT_EQ(s.state().count, before.count);
  EXPECT_EQ(s.state().mean, before.mean);
}

TEST(ChartsSelfStartingTest, RecursiveResidualStandardizerUsesTheRunningResidualScale) {
  RecursiveResidualStandardizer s;
  double z = 0;
  ASSERT_TRUE(s.Update(std::nan(""), &z).ok());  // regression not identified yet: skipped
  EXPECT_TRUE(std::isnan(z));
  EXPECT_EQ(s.state().count, 0.0);
  ASSERT_TRUE(s.Update(2.0, &z).ok());  // no scale yet
  EXPECT_TRUE(std::isnan(z));
  ASSERT_TRUE(s.Update(-1.0, &z).ok());  // scale 2 with 1 dof: t = -0.5
  EXPECT_DOUBLE_EQ(z, StandardizeRecursiveResidual(-1.0, 2.0, 1.0));
  ASSERT_TRUE(s.Update(3.0, &z).ok());  // scale sqrt(5 / 2), 2 dof
  EXPECT_DOUBLE_EQ(z, dist::StudentTNormalScore(3.0 / std::sqrt(2.5), 2.0));
  EXPECT_EQ(s.Update(INFINITY, &z).code(), ErrorCode::kNonFinite);
  EXPECT_TRUE(std::isnan(StandardizeRecursiveResidual(1.0, 0.0, 3.0)));
  EXPECT_TRUE(std::isnan(StandardizeRecursiveResidual(1.0, 1.0, 0.5)));
}

TEST(ChartsSelfStartingTest, StateRoundTripsAndRestoreValidates) {
  SelfStartingStandardizer a, b;
  double za = 0, zb = 0;
  for (double y : {3.0, 1.0, 4.0, 1.0, 5.0}) ASSERT_TRUE(a.Update(y, &za).ok());
  std::vector<double> buf;
  StateWriter w(&buf);
  a.state().Pack(w);
  SelfStartingStandardizer::State s;
  StateReader r(buf);
  ASSERT_TRUE(s.Unpack(r).ok());
  ASSERT_TRUE(r.status().ok());
  ASSERT_TRUE(b.Restore(s).ok());
  ASSERT_TRUE(a.Update(9.0, &za).ok());
  ASSERT_TRUE(b.Update(9.0, &zb).ok());
  EXPECT_EQ(za, zb);
  s.m2 = -1;
  EXPECT_EQ(b.Restore(s).code(), ErrorCode::kInvalidState);
}

TEST(ChartsSelfStartingTest, KnownStandardizerIsPhaseTwoScaling) {
  KnownStandardizerOptions o{10.0, 2.0};
  ASSERT_TRUE(o.Validate().ok());
  KnownStandardizer k(o);
  EXPECT_DOUBLE_EQ(k.Standardize(13.0), 1.5);
  o.sd = 0;
  EXPECT_EQ(o.Validate().code(), ErrorCode::kInvalidConfig);
}

}  // namespace
}  // namespace bayline::est
