// LinearMl: maximum likelihood of the linear-gaussian model on the RLS recursion.
#include "estimators/ls/linear_ml.h"

#include <gtest/gtest.h>

#include <cmath>
#include <vector>

#include "estimators/core/distributions.h"
#include "tests/unit/estimators/ls/test_util.h"

namespace bayline::est {
namespace {

using testing::BatchLs;
using testing::MakeData;
using testing::MaxRelErr;
using testing::SampleAt;

// Under normal errors the ML coefficients equal OLS (REFERENCES.md: standard identities; common
// practice, no source); OLS computed here by pivoted Householder QR.
TEST(LinearMlTest, CoefficientsEqualBatchOlsAndVariancesAreMlAndUnbiased) {
  for (int p : {2, 5, 9}) {
    Eigen::VectorXd theta = Eigen::VectorXd::LinSpaced(p, -3.0, 1.0);
    const auto d = MakeData(250, theta, 0.7, 61 + static_cast<std::uint64_t>(p));
    LinearMl ml(RlsOptions{}, p);
    std::vector<double> buf;
    for (int i = 0; i < 250; ++i) ASSERT_TRUE(ml.Update(SampleAt(d, i, &buf)).ok());
    const Eigen::VectorXd ols = BatchLs(d.x, d.y);
    EXPECT_LT(MaxRelErr(ml.coefficients(), ols), 1e-10) << p;
    const double rss = (d.y - d.x * ols).squaredNorm();
    EXPECT_NEAR(ml.sigma2_ml(), rss / 250, 1e-10 * rss / 250);
    EXPECT_NEAR(ml.sigma2_unbiased(), rss / (250 - p), 1e-10 * rss / (250 - p));
    // Inverse Fisher information sigma^2_ML (X'X)^{-1} (common practice, no source).
    const Eigen::MatrixXd cov = rss / 250 * (d.x.transpose() * d.x).inverse();
    EXPECT_LT((ml.covariance() - cov).norm() / cov.norm(), 1e-9);
    const ParameterReport rep = ml.Report(0.95);
    const double z = dist::NormalQuantile(0.975);
    for (int j = 0; j < p; ++j) {
      const auto k = static_cast<std::size_t>(j);
      EXPECT_NEAR(rep.std_error[k], std::sqrt(cov(j, j)), 1e-9 * std::sqrt(cov(j, j)));
      EXPECT_NEAR(rep.upper[k] - rep.value[k], z * rep.std_error[k], 1e-12);
    }
    // Maximised log-likelihood -n/2 (log(2 pi RSS/n) + 1), and it is the maximum: nearby
    // parameters give a lower gaussian log-likelihood.
    const double lmax = -125.0 * (std::log(2.0 * M_PI * rss / 250) + 1.0);
    EXPECT_NEAR(ml.log_likelihood(), lmax, 1e-9 * std::fabs(lmax));
    EXPECT_NEAR(rep.log_likelihood, lmax, 1e-9 * std::fabs(lmax));
    auto loglik = [&](const Eigen::VectorXd& th, double s2) {
      const double r2 = (d.y - d.x * th).squaredNorm();
      return -125.0 * std::log(2.0 * M_PI * s2) - 0.5 * r2 / s2;
    };
    Eigen::VectorXd moved = ols;
    moved(0) += 0.01;
    EXPECT_LT(loglik(moved, rss / 250), ml.log_likelihood());
    EXPECT_LT(loglik(ols, 1.1 * rss / 250), ml.log_likelihood());
  }
}

TEST(LinearMlTest, PredictiveDensityAndInnovationUseTheMlVariance) {
  Eigen::VectorXd theta(2);
  theta << 1.0, -1.0;
  const auto d = MakeData(80, theta, 0.5, 62);
  LinearMl ml(RlsOptions{}, 2);
  std::vector<double> buf;
  double cumulative = 0.0;
  for (int i = 0; i < 80; ++i) {
    // Expected predictive of this observation from the fit of the previous ones.
    double expected = NAN;
    if (i > 2) {
      const Eigen::MatrixXd xp = d.x.topRows(i);
      const Eigen::VectorXd th = BatchLs(xp, d.y.head(i));
      const double s2 = (d.y.head(i) - xp * th).squaredNorm() / i;
      const Eigen::VectorXd xi = d.x.row(i).transpose();
      const double q = xi.dot((xp.transpose() * xp).ldlt().solve(xi));
      expected = dist::NormalLogPdf(d.y(i), xi.dot(th), std::sqrt(s2 * (1.0 + q)));
      const std::vector<double> xv = {xi(0), xi(1)};
      EXPECT_NEAR(ml.PredictiveLogDensity(xv, d.y(i)), expected, 1e-9);
    }
    Innovation inn;
    ASSERT_TRUE(ml.Update(SampleAt(d, i, &buf), &inn).ok());
    if (i > 2) {
      ASSERT_TRUE(inn.valid);
      EXPECT_NEAR(inn.log_predictive, expected, 1e-9);
      cumulative += expected;
    }
  }
  EXPECT_NEAR(ml.cumulative_log_predictive(), cumulative, 1e-8);
  EXPECT_TRUE(std::isnan(ml.PredictiveLogDensity(std::vector<double>{1.0}, 0.0)));
}

// The plug-in predictive of a new y at x: N(x'theta_OLS, RSS/n (1 + x'(X'X)^{-1}x)), with the
// parameter part RSS/n x'(X'X)^{-1}x reported as mean_sd (common practice, no source); batch
// values from pivoted Householder QR and an LDLT solve.
TEST(LinearMlTest, PredictIsThePlugInGaussianOfTheBatchFit) {
  Eigen::VectorXd theta(3);
  theta << 0.5, 2.0, -1.5;
  const auto d = MakeData(120, theta, 0.8, 63);
  LinearMl ml(RlsOptions{}, 3);
  std::vector<double> buf;
  for (int i = 0; i < 120; ++i) ASSERT_TRUE(ml.Update(SampleAt(d, i, &buf)).ok());
  const Eigen::VectorXd ols = BatchLs(d.x, d.y);
  const double s2 = (d.y - d.x * ols).squaredNorm() / 120;
  const std::vector<double> x = {1.0, 0.3, -2.0};
  const Eigen::Map<const Eigen::VectorXd> xv(x.data(), 3);
  const double q = xv.dot((d.x.transpose() * d.x).ldlt().solve(xv));
  const double z = dist::NormalQuantile(0.95);
  const Prediction p = ml.Predict(x, 0.9);
  ASSERT_TRUE(p.valid);
  EXPECT_EQ(p.level, 0.9);
  EXPECT_NEAR(p.mean, xv.dot(ols), 1e-10 * std::fabs(xv.dot(ols)));
  EXPECT_NEAR(p.mean_sd, std::sqrt(s2 * q), 1e-9 * std::sqrt(s2 * q));
  EXPECT_NEAR(p.sd, std::sqrt(s2 * (1.0 + q)), 1e-9 * std::sqrt(s2 * (1.0 + q)));
  EXPECT_NEAR(p.upper - p.mean, z * p.sd, 1e-12 * p.sd);
  EXPECT_NEAR(p.mean - p.lower, z * p.sd, 1e-12 * p.sd);

  EXPECT_FALSE(ml.Predict(std::vector<double>{1.0, 2.0}, 0.9).valid);  // wrong size
  EXPECT_FALSE(ml.Predict(x, 1.0).valid);                              // level outside (0, 1)
  const Prediction none = LinearMl(RlsOptions{}, 3).Predict(x, 0.8);   // nothing seen yet
  EXPECT_FALSE(none.valid);
  EXPECT_EQ(none.level, 0.8);
  EXPECT_TRUE(std::isnan(none.mean));
}

TEST(LinearMlTest, NotIdentifiedGivesNaNAndRejectsBadInput) {
  LinearMl ml(RlsOptions{}, 3);
  std::vector<double> x = {1.0, 2.0, 3.0};
  Sample s;
  s.x = x;
  s.y = 1.0;
  ASSERT_TRUE(ml.Update(s).ok());
  EXPECT_FALSE(ml.Report().identifiable);
  EXPECT_TRUE(std::isnan(ml.sigma2_ml()));
  EXPECT_TRUE(std::isnan(ml.log_likelihood()));
  const auto before = testing::Packed(ml.state());
  s.weight = -1.0;
  EXPECT_EQ(ml.Update(s).code(), ErrorCode::kInvalidWeight);
  EXPECT_TRUE(testing::BitIdentical(testing::Packed(ml.state()), before));
  ml.Reset();
  EXPECT_EQ(ml.cumulative_log_predictive(), 0.0);
}

}  // namespace
}  // namespace bayline::est
