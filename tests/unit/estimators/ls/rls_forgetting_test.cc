// Forgetting (per observation and per elapsed time), windup protection, robust mode and
// uncertainty inflation.
#include <gtest/gtest.h>

#include <Eigen/SVD>
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <random>
#include <vector>

#include "estimators/ls/recursive_least_squares.h"
#include "estimators/ls/rls.h"
#include "tests/unit/estimators/ls/test_util.h"

namespace bayline::est {
namespace {

using testing::BatchLs;
using testing::MakeData;
using testing::MaxRelErr;
using testing::SampleAt;

// Exponentially weighted least squares: the batch problem with weights lambda^(n-1-t) (the
// definition of forgetting; common practice, no source).
TEST(RlsForgettingTest, PerObservationForgettingEqualsDiscountedBatch) {
  Eigen::VectorXd theta(3);
  theta << 0.5, -1.0, 2.0;
  const auto d = MakeData(150, theta, 0.4, 21);
  RlsOptions opt;
  opt.forgetting.lambda = 0.97;
  opt.windup_floor = 0.0;  // exact discounted LS
  RecursiveLeastSquares<3> est(opt);
  std::vector<double> buf;
  for (int i = 0; i < 150; ++i) ASSERT_TRUE(est.Update(SampleAt(d, i, &buf)).ok());
  Eigen::VectorXd w(150);
  for (int i = 0; i < 150; ++i) w(i) = std::pow(0.97, 149 - i);
  EXPECT_LT(MaxRelErr(est.coefficients(), BatchLs(d.x, d.y, &w)), 1e-10);
  EXPECT_NEAR(est.effective_n(), w.sum(), 1e-10 * w.sum());
}

TEST(RlsForgettingTest, HalfLifeForgettingFollowsTheClock) {
  Eigen::VectorXd theta(2);
  theta << 1.0, 3.0;
  const auto d = MakeData(120, theta, 0.3, 22);
  RlsOptions opt;
  opt.forgetting.half_life = 7.5;
  opt.windup_floor = 0.0;
  RecursiveLeastSquares<2> est(opt);
  std::mt19937_64 rng(23);
  std::exponential_distribution<double> gap(1.0);
  std::vector<double> times(120);
  double t = 100.0;
  std::vector<double> buf;
  for (int i = 0; i < 120; ++i) {
    t += gap(rng);
    times[static_cast<std::size_t>(i)] = t;
    Sample s = SampleAt(d, i, &buf);
    s.time = t;
    ASSERT_TRUE(est.Update(s).ok());
  }
  Eigen::VectorXd w(120);
  for (int i = 0; i < 120; ++i) w(i) = std::exp2(-(t - times[static_cast<std::size_t>(i)]) / 7.5);
  EXPECT_LT(MaxRelErr(est.coefficients(), BatchLs(d.x, d.y, &w)), 1e-10);
  EXPECT_NEAR(est.effective_n(), w.sum(), 1e-10 * w.sum());
  // An untimed sample does not decay the past (core/forgetting.h).
  const double n_before = est.effective_n();
  Sample s = SampleAt(d, 0, &buf);
  ASSERT_TRUE(est.Update(s).ok());
  EXPECT_NEAR(est.effective_n(), n_before + 1.0, 1e-12);
}

// Windup: after 1000 exciting rows the slope regressor stays 0 for 10^7 updates with lambda = 0.99.
// With the default floor the information stays bounded and positive definite, the estimate finite.
TEST(RlsForgettingTest, WindupFloorKeepsInformationBoundedOverTenMillionUpdates) {
  RlsOptions opt;
  opt.forgetting.lambda = 0.99;
  RecursiveLeastSquares<2> est(opt);
  std::mt19937_64 rng(24);
  std::normal_distribution<double> g;
  std::vector<double> noise(4096);  // cycled, so the 10^7 steps cost no random draws
  for (double& v : noise) v = g(rng);
  double x[2] = {1.0, 0.0};
  Sample s;
  s.x = std::span<const double>(x, 2);
  double max_diag = 0.0, min_diag = 1e300, max_cond = 0.0;
  for (long t = 0; t < 10'000'000; ++t) {
    x[1] = t < 1000 ? noise[static_cast<std::size_t>((t * 7 + 3) & 4095)] : 0.0;
    s.y = 1.0 + 2.0 * x[1] + 0.1 * noise[static_cast<std::size_t>(t & 4095)];
    ASSERT_TRUE(est.Update(s).ok());
    if (t >= 1000 && t % 500'000 == 0) {
      const auto& r = est.information_factor();
      ASSERT_TRUE(r.allFinite()) << t;
      max_diag = std::max(max_diag, r.diagonal().maxCoeff());
      min_diag = std::min(min_diag, r.diagonal().minCoeff());
      const Eigen::JacobiSVD<Eigen::Matrix2d> svd(r);  // unscaled: windup is a scale effect
      max_cond = std::max(max_cond, svd.singularValues()(0) / svd.singularValues()(1));
      const Eigen::Vector2d th = est.coefficients();
      ASSERT_TRUE(th.allFinite()) << t;
      ASSERT_TRUE(est.covariance().allFinite()) << t;
      EXPECT_NEAR(th(0), 1.0, 0.2) << t;  // the excited direction still tracks
    }
  }
  // Information R'R <= sum of lambda^k |x|^2 = 100 in the intercept direction; the floor keeps
  // about 1e-6 * 100 / 2 in the other, so the condition number of R stays near sqrt(2e6).
  std::printf("windup: max diag(R) %.3g, min diag(R) %.3g, max cond(R) %.3g\n", max_diag, min_diag,
              max_cond);
  EXPECT_LT(max_diag, 11.0);
  EXPECT_GT(min_diag, 1e-3);
  EXPECT_LT(max_cond, 1e4);
  const Eigen::Vector2d th = est.coefficients();
  EXPECT_NEAR(th(1), 2.0, 0.5);  // the slope is anchored where it was last identified
}

// The same run without the floor winds up (control: the test above can fail).
TEST(RlsForgettingTest, WithoutFloorTheUnexcitedDirectionWindsUp) {
  RlsOptions opt;
  opt.forgetting.lambda = 0.99;
  opt.windup_floor = 0.0;
  RecursiveLeastSquares<2> est(opt);
  std::mt19937_64 rng(24);
  std::normal_distribution<double> g;
  double x[2] = {1.0, 0.0};
  Sample s;
  s.x = std::span<const double>(x, 2);
  for (long t = 0; t < 20'000; ++t) {
    x[1] = t < 1000 ? g(rng) : 0.0;
    s.y = 1.0 + 2.0 * x[1] + 0.1 * g(rng);
    ASSERT_TRUE(est.Update(s).ok());
  }
  EXPECT_LT(est.information_factor()(1, 1), 1e-20);
  EXPECT_TRUE(!(est.covariance()(1, 1) < 1e20)) << est.covariance()(1, 1);
}

TEST(RlsForgettingTest, DefaultFloorBarelyMovesAWellExcitedEstimate) {
  Eigen::VectorXd theta(2);
  theta << 1.0, 3.0;
  const auto d = MakeData(2000, theta, 0.3, 25);
  RlsOptions with, without;
  with.forgetting.lambda = without.forgetting.lambda = 0.98;
  without.windup_floor = 0.0;
  RecursiveLeastSquares<2> a(with), b(without);
  std::vector<double> buf;
  for (int i = 0; i < 2000; ++i) {
    ASSERT_TRUE(a.Update(SampleAt(d, i, &buf)).ok());
    ASSERT_TRUE(b.Update(SampleAt(d, i, &buf)).ok());
  }
  EXPECT_LT(MaxRelErr(a.coefficients(), b.coefficients()), 1e-4);
}

// Huber (1964, Annals of Mathematical Statistics 35) weights: a few gross outliers barely move the
// robust estimate while they drag plain least squares.
TEST(RlsRobustTest, HuberWeightsResistGrossOutliers) {
  Eigen::VectorXd theta(2);
  theta << 1.0, 2.0;
  auto d = MakeData(400, theta, 0.1, 26);
  std::vector<int> outliers;
  for (int i = 100; i < 400; i += 40) {
    d.y(i) += 20.0;
    outliers.push_back(i);
  }
  RlsOptions robust_opt;
  robust_opt.robust = true;
  RecursiveLeastSquares<2> robust(robust_opt), plain;
  std::vector<double> buf;
  for (int i = 0; i < 400; ++i) {
    RecursiveResidual rr;
    ASSERT_TRUE(robust.Update(SampleAt(d, i, &buf), nullptr, &rr).ok());
    ASSERT_TRUE(plain.Update(SampleAt(d, i, &buf)).ok());
    const bool is_outlier = std::find(outliers.begin(), outliers.end(), i) != outliers.end();
    if (is_outlier) {
      EXPECT_LT(rr.robust_weight, 0.05) << i;
    }
  }
  EXPECT_GT(std::fabs(plain.coefficients()(0) - 1.0), 0.2);  // 8 * 20 / 400 = 0.4 of bias
  EXPECT_LT(std::fabs(robust.coefficients()(0) - 1.0), 0.03);
  EXPECT_LT(std::fabs(robust.coefficients()(1) - 2.0), 0.03);
}

TEST(RlsRobustTest, RobustModeOnCleanDataStaysCloseToLeastSquares) {
  Eigen::VectorXd theta(2);
  theta << -1.0, 0.5;
  const auto d = MakeData(1000, theta, 1.0, 27);
  RlsOptions robust_opt;
  robust_opt.robust = true;
  RecursiveLeastSquares<2> robust(robust_opt), plain;
  std::vector<double> buf;
  for (int i = 0; i < 1000; ++i) {
    ASSERT_TRUE(robust.Update(SampleAt(d, i, &buf)).ok());
    ASSERT_TRUE(plain.Update(SampleAt(d, i, &buf)).ok());
  }
  const ParameterReport rep = plain.Report();
  for (int j = 0; j < 2; ++j) {
    EXPECT_LT(std::fabs(robust.coefficients()(j) - plain.coefficients()(j)),
              0.5 * rep.std_error[static_cast<std::size_t>(j)]);
  }
}

TEST(RlsInflateTest, InflationScalesCovarianceAndSpeedsReconvergence) {
  Eigen::VectorXd theta(2);
  theta << 1.0, 2.0;
  const auto d = MakeData(500, theta, 0.2, 28);
  Eigen::VectorXd shifted(2);
  shifted << 3.0, 2.0;
  const auto d2 = MakeData(30, shifted, 0.2, 29);
  Rls a(RlsOptions{}, 2), b(RlsOptions{}, 2);
  std::vector<double> buf;
  for (int i = 0; i < 500; ++i) {
    ASSERT_TRUE(a.Update(SampleAt(d, i, &buf)).ok());
    ASSERT_TRUE(b.Update(SampleAt(d, i, &buf)).ok());
  }
  const Eigen::MatrixXd cov = b.covariance();
  const Eigen::VectorXd th = b.coefficients();
  ASSERT_TRUE(b.InflateUncertainty(1e4).ok());
  EXPECT_LT((b.covariance() - 1e4 * cov).norm() / (1e4 * cov.norm()), 1e-12);
  EXPECT_LT(MaxRelErr(b.coefficients(), th), 1e-14);
  EXPECT_EQ(b.InflateUncertainty(1.0).code(), ErrorCode::kInvalidConfig);
  EXPECT_EQ(b.InflateUncertainty(std::nan("")).code(), ErrorCode::kInvalidConfig);
  for (int i = 0; i < 30; ++i) {
    ASSERT_TRUE(a.Update(SampleAt(d2, i, &buf)).ok());
    ASSERT_TRUE(b.Update(SampleAt(d2, i, &buf)).ok());
  }
  EXPECT_GT(std::fabs(a.coefficients()(0) - 3.0), 1.5);  // plain LS: 1 + 2 * 30/530
  EXPECT_LT(std::fabs(b.coefficients()(0) - 3.0), 0.2);
}

}  // namespace
}  // namespace bayline::est
