#include "estimators/ml/gaussian_ml.h"

#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <numbers>
#include <random>
#include <vector>

#include "estimators/ml/lognormal_ml.h"
#include "tests/unit/estimators/ml/ml_test_util.h"

namespace bayline::est {
namespace {

using testing::RelNear;
using testing::Y;

// Two-pass weighted moments in long double: the batch answer the recursion must reproduce.
struct Batch {
  long double w = 0, w2 = 0, mean = 0, m2 = 0;
};
Batch TwoPass(const std::vector<double>& y, const std::vector<double>& a) {
  Batch b;
  long double s = 0;
  for (std::size_t i = 0; i < y.size(); ++i) {
    b.w += a[i];
    b.w2 += static_cast<long double>(a[i]) * a[i];
    s += static_cast<long double>(a[i]) * y[i];
  }
  b.mean = s / b.w;
  for (std::size_t i = 0; i < y.size(); ++i) b.m2 += a[i] * (y[i] - b.mean) * (y[i] - b.mean);
  return b;
}

TEST(GaussianMlTest, MatchesTwoPassWeightedMomentsFarFromZero) {
  // Ill-conditioned: mean 1e9, sd 1e-2, so raw sums of squares would lose every digit.
  std::mt19937_64 rng(11);
  std::normal_distribution<double> noise(0.0, 1e-2);
  std::uniform_real_distribution<double> wdist(0.5, 3.0);
  std::vector<double> y, a;
  GaussianMl g;
  for (int i = 0; i < 5000; ++i) {
    y.push_back(1e9 + noise(rng));
    a.push_back(wdist(rng));
    ASSERT_TRUE(g.Update(Y(y.back(), a.back())).ok());
  }
  const Batch b = TwoPass(y, a);
  EXPECT_TRUE(RelNear(g.mean(), static_cast<double>(b.mean), 1e-15));
  EXPECT_TRUE(RelNear(g.variance_ml(), static_cast<double>(b.m2 / b.w), 1e-12));
  const double n_eff = static_cast<double>(b.w * b.w / b.w2);
  EXPECT_TRUE(RelNear(g.effective_sample_size(), n_eff, 1e-12));
  EXPECT_TRUE(
      RelNear(g.variance_unbiased(), static_cast<double>(b.m2 / (b.w - b.w2 / b.w)), 1e-12));
}

TEST(GaussianMlTest, UnitWeightsGiveTheUsualUnbiasedVariance) {
  GaussianMl g;
  for (double v : {2.0, 4.0, 4.0, 4.0, 5.0, 5.0, 7.0, 9.0}) ASSERT_TRUE(g.Update(Y(v)).ok());
  // Mean 5, sum of squared deviations 32 (hand computation).
  EXPECT_DOUBLE_EQ(g.mean(), 5.0);
  EXPECT_DOUBLE_EQ(g.variance_ml(), 4.0);
  EXPECT_DOUBLE_EQ(g.variance_unbiased(), 32.0 / 7.0);
  EXPECT_DOUBLE_EQ(g.effective_sample_size(), 8.0);
}

TEST(GaussianMlTest, PerObservationForgettingEqualsExplicitDiscounting) {
  GaussianMl::Options o;
  o.forgetting.lambda = 0.97;
  GaussianMl g(o);
  std::mt19937_64 rng(12);
  std::normal_distribution<double> n01;
  std::vector<double> y;
  for (int i = 0; i < 400; ++i) {
    y.push_back(3.0 + 0.01 * i + n01(rng));
    ASSERT_TRUE(g.Update(Y(y.back())).ok());
  }
  std::vector<double> a(y.size());
  for (std::size_t i = 0; i < y.size(); ++i)
    a[i] = std::pow(0.97, static_cast<double>(y.size() - 1 - i));
  const Batch b = TwoPass(y, a);
  EXPECT_TRUE(RelNear(g.mean(), static_cast<double>(b.mean), 1e-13));
  EXPECT_TRUE(RelNear(g.variance_ml(), static_cast<double>(b.m2 / b.w), 1e-11));
  EXPECT_TRUE(RelNear(g.state().weight_sum, static_cast<double>(b.w), 1e-13));
  EXPECT_TRUE(
      RelNear(g.variance_unbiased(), static_cast<double>(b.m2 / (b.w - b.w2 / b.w)), 1e-11));
}

TEST(GaussianMlTest, HalfLifeForgettingDiscountsByElapsedTime) {
  GaussianMl::Options o;
  o.forgetting.half_life = 10.0;
  GaussianMl g(o);
  Sample s = Y(1.0);
  s.time = 100.0;
  ASSERT_TRUE(g.Update(s).ok());
  s.y = 3.0;
  s.time = 120.0;  // two half-lives: the first observation keeps weight 1/4
  ASSERT_TRUE(g.Update(s).ok());
  EXPECT_DOUBLE_EQ(g.state().weight_sum, 1.25);
  EXPECT_DOUBLE_EQ(g.mean(), (0.25 * 1.0 + 3.0) / 1.25);
  s.y = 5.0;
  s.time = std::numeric_limits<double>::quiet_NaN();  // untimed: no decay
  ASSERT_TRUE(g.Update(s).ok());
  EXPECT_DOUBLE_EQ(g.state().weight_sum, 2.25);
  EXPECT_EQ(g.state().last_time, 120.0);
}

TEST(GaussianMlTest, InnovationUsesTheStateBeforeTheUpdate) {
  GaussianMl g;
  Innovation inn;
  ASSERT_TRUE(g.Update(Y(1.0), &inn).ok());
  EXPECT_FALSE(inn.valid);
  ASSERT_TRUE(g.Update(Y(3.0), &inn).ok());
  EXPECT_FALSE(inn.valid);  // one value seen: no spread yet
  const double mean = g.mean(), sd = std::sqrt(g.variance_ml());
  ASSERT_TRUE(g.Update(Y(6.0), &inn).ok());
  ASSERT_TRUE(inn.valid);
  EXPECT_DOUBLE_EQ(inn.prediction, mean);
  EXPECT_DOUBLE_EQ(inn.residual, 6.0 - mean);
  EXPECT_DOUBLE_EQ(inn.predictive_sd, sd);
  EXPECT_DOUBLE_EQ(inn.standardized, (6.0 - mean) / sd);
  const double log_density =
      -0.5 * std::log(2 * std::numbers::pi * sd * sd) - 0.5 * std::pow((6.0 - mean) / sd, 2);
  EXPECT_TRUE(RelNear(inn.log_predictive, log_density, 1e-14));
}

TEST(GaussianMlTest, ReportGivesFisherStandardErrorsWaldIntervalsAndLogLikelihood) {
  GaussianMl g;
  std::mt19937_64 rng(13);
  std::normal_distribution<double> n(10.0, 2.0);
  std::vector<double> y;
  for (int i = 0; i < 300; ++i) {
    y.push_back(n(rng));
    ASSERT_TRUE(g.Update(Y(y.back())).ok());
  }
  const ParameterReport r = g.Report(0.95);
  ASSERT_TRUE(r.identifiable);
  const double v = g.variance_ml();
  EXPECT_TRUE(RelNear(r.std_error[0], std::sqrt(v / 300), 1e-14));
  EXPECT_TRUE(RelNear(r.std_error[1], v * std::sqrt(2.0 / 300), 1e-14));
  const double z = 1.959963984540054;  // 97.5% standard normal quantile, from memory
  EXPECT_TRUE(RelNear(r.upper[0] - r.value[0], z * r.std_error[0], 1e-12));
  EXPECT_TRUE(RelNear(r.value[1] - r.lower[1], z * r.std_error[1], 1e-12));
  EXPECT_EQ(r.effective_n, 300.0);
  double ll = 0;
  for (double v_i : y)
    ll += -0.5 * std::log(2 * std::numbers::pi * v) - 0.5 * (v_i - g.mean()) * (v_i - g.mean()) / v;
  EXPECT_TRUE(RelNear(r.log_likelihood, ll, 1e-12));
}

TEST(GaussianMlTest, NotIdentifiableUntilTwoDistinctValues) {
  GaussianMl g;
  EXPECT_FALSE(g.Report().identifiable);
  ASSERT_TRUE(g.Update(Y(4.0)).ok());
  ASSERT_TRUE(g.Update(Y(4.0)).ok());
  const ParameterReport r = g.Report();
  EXPECT_FALSE(r.identifiable);
  EXPECT_TRUE(std::isnan(r.value[0]));
  EXPECT_EQ(r.effective_n, 2.0);
  ASSERT_TRUE(g.Update(Y(5.0)).ok());
  EXPECT_TRUE(g.Report().identifiable);
}

TEST(GaussianMlTest, RejectsBadInputAndChangesNothing) {
  GaussianMl g;
  ASSERT_TRUE(g.Update(Y(1.0)).ok());
  ASSERT_TRUE(g.Update(Y(2.0)).ok());
  const double nan = std::numeric_limits<double>::quiet_NaN(),
               inf = std::numeric_limits<double>::infinity();
  testing::ExpectRejected(g, Y(nan), ErrorCode::kNonFinite);
  testing::ExpectRejected(g, Y(inf), ErrorCode::kNonFinite);
  testing::ExpectRejected(g, Y(1.0, 0.0), ErrorCode::kInvalidWeight);
  testing::ExpectRejected(g, Y(1.0, -2.0), ErrorCode::kInvalidWeight);
  testing::ExpectRejected(g, Y(1.0, nan), ErrorCode::kNonFinite);
  Sample timed = Y(1.0);
  timed.time = inf;
  testing::ExpectRejected(g, timed, ErrorCode::kNonFinite);
  const double x[1] = {1.0};
  Sample with_x = Y(1.0);
  with_x.x = x;
  testing::ExpectRejected(g, with_x, ErrorCode::kWrongRegressorCount);
  // Overflow of the squared deviation is a numerical failure, not a silent inf.
  testing::ExpectRejected(g, Y(1e300), ErrorCode::kNumericalFailure);
}

TEST(GaussianMlTest, RestoreContinuesBitIdentically) {
  std::mt19937_64 rng(14);
  std::normal_distribution<double> n(5.0, 1.0);
  std::vector<Sample> first, rest;
  for (int i = 0; i < 50; ++i) {
    Sample s = Y(n(rng), 1.0 + (i % 3));
    s.time = i * 0.5;
    (i < 20 ? first : rest).push_back(s);
  }
  GaussianMl::Options o;
  o.forgetting.half_life = 3.0;
  testing::ExpectRoundTripBitIdentical([&] { return GaussianMl(o); }, first, rest);
}

TEST(GaussianMlTest, RejectsTruncatedAndInconsistentState) {
  GaussianMl g;
  for (double v : {1.0, 2.0, 4.0}) ASSERT_TRUE(g.Update(Y(v)).ok());
  testing::ExpectTruncatedAndExtendedRejected(g);
  const std::vector<double> before = testing::Packed(g.state());
  GaussianMl::State bad = g.state();
  bad.m2 = -1.0;
  EXPECT_EQ(g.Restore(bad).code(), ErrorCode::kInvalidState);
  bad = g.state();
  bad.weight_sum = 0.0;  // data without weight
  EXPECT_EQ(g.Restore(bad).code(), ErrorCode::kInvalidState);
  bad = g.state();
  bad.weight_sq_sum = 100.0;  // W2 > W^2 is impossible
  EXPECT_EQ(g.Restore(bad).code(), ErrorCode::kInvalidState);
  bad = g.state();
  bad.mean_shifted = std::numeric_limits<double>::quiet_NaN();
  EXPECT_EQ(g.Restore(bad).code(), ErrorCode::kInvalidState);
  EXPECT_TRUE(testing::SameBits(testing::Packed(g.state()), before));
}

TEST(LognormalMlTest, IsTheGaussianOfTheLogsWithTheJacobian) {
  std::mt19937_64 rng(15);
  std::lognormal_distribution<double> ln(1.5, 0.4);
  LognormalMl l;
  GaussianMl g;
  std::vector<double> y;
  for (int i = 0; i < 1000; ++i) {
    y.push_back(ln(rng));
    ASSERT_TRUE(l.Update(Y(y.back())).ok());
    ASSERT_TRUE(g.Update(Y(std::log(y.back()))).ok());
  }
  EXPECT_EQ(l.meanlog(), g.mean());
  EXPECT_EQ(l.sdlog(), std::sqrt(g.variance_ml()));
  const ParameterReport r = l.Report();
  ASSERT_TRUE(r.identifiable);
  EXPECT_TRUE(RelNear(r.std_error[1], l.sdlog() / std::sqrt(2000.0), 1e-14));
  double ll = 0;  // sum of lognormal log-densities at the estimate, written out
  for (double v : y) {
    const double z = (std::log(v) - l.meanlog()) / l.sdlog();
    ll += -std::log(v * l.sdlog() * std::sqrt(2 * std::numbers::pi)) - 0.5 * z * z;
  }
  EXPECT_TRUE(RelNear(r.log_likelihood, ll, 1e-11));
}

TEST(LognormalMlTest, InnovationIsOnTheScaleOfY) {
  LognormalMl l;
  for (double v : {1.0, 2.0, 4.0}) ASSERT_TRUE(l.Update(Y(v)).ok());
  const double m = l.meanlog(), s2 = l.sdlog() * l.sdlog();
  Innovation inn;
  ASSERT_TRUE(l.Update(Y(3.0), &inn).ok());
  ASSERT_TRUE(inn.valid);
  const double ey = std::exp(m + s2 / 2);
  EXPECT_TRUE(RelNear(inn.prediction, ey, 1e-14));
  EXPECT_TRUE(
      RelNear(inn.predictive_sd, std::sqrt((std::exp(s2) - 1) * std::exp(2 * m + s2)), 1e-13));
  EXPECT_TRUE(RelNear(inn.standardized, (3.0 - ey) / inn.predictive_sd, 1e-14));
}

TEST(LognormalMlTest, RejectsNonPositiveAndBadInput) {
  LognormalMl l;
  ASSERT_TRUE(l.Update(Y(2.0)).ok());
  testing::ExpectRejected(l, Y(0.0), ErrorCode::kOutOfDomain);
  testing::ExpectRejected(l, Y(-1.0), ErrorCode::kOutOfDomain);
  testing::ExpectRejected(l, Y(std::numeric_limits<double>::quiet_NaN()), ErrorCode::kNonFinite);
  testing::ExpectRejected(l, Y(1.0, 0.0), ErrorCode::kInvalidWeight);
}

TEST(LognormalMlTest, RestoreContinuesBitIdentically) {
  std::vector<Sample> first, rest;
  for (int i = 0; i < 30; ++i) (i < 10 ? first : rest).push_back(Y(1.0 + 0.37 * i + (i % 4)));
  LognormalMl::Options o;
  o.forgetting.lambda = 0.9;
  testing::ExpectRoundTripBitIdentical([&] { return LognormalMl(o); }, first, rest);
  LognormalMl l;
  ASSERT_TRUE(l.Update(Y(2.0)).ok());
  testing::ExpectTruncatedAndExtendedRejected(l);
}

}  // namespace
}  // namespace bayline::est
