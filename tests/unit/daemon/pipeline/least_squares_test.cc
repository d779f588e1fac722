#include <gtest/gtest.h>

#include <Eigen/Dense>
#include <cmath>
#include <random>
#include <vector>

#include "tests/unit/daemon/pipeline/test_util.h"

namespace bayline::pipeline {
namespace {

using bayline::v1::Publication;

// The pipeline's linear-channel ls estimate is the batch OLS estimate of the same data
// (common practice, no source): beta = argmin |y - X beta|^2, Cov = s^2 (X'X)^{-1},
// s^2 = RSS / (n - p).
TEST(LeastSquaresTest, LinearChannelLsEqualsBatchOls) {
  auto config = testing::ParseConfig(R"(
    rules { match: "**" spec { model: "linear" regressors: ["reference", "ambient", "supply"]
                              publish { every_n: 1 } } })");
  Pipeline p(config);
  testing::RecordingSink sink;
  std::mt19937_64 rng(12345);
  std::normal_distribution<double> n01(0.0, 1.0);
  const int n = 60, k = 3;
  Eigen::MatrixXd X(n, k + 1);
  Eigen::VectorXd y(n);
  for (int i = 0; i < n; ++i) {
    const double ref = -25 + 30 * (i % 7) / 6.0 + 0.3 * n01(rng);
    const double ambient = 12 + 4 * n01(rng);
    const double supply = 230 + 5 * n01(rng);
    X.row(i) << 1.0, ref, ambient, supply;
    y(i) = 0.4 + 1.02 * ref + 0.015 * ambient - 0.002 * supply + 0.05 * n01(rng);
    p.Process(
        testing::Obs("coldstore/probe1/calibration", uint64_t(i + 1), y(i), {ref, ambient, supply}),
        testing::kArrival, sink);
  }
  const Eigen::VectorXd beta = X.colPivHouseholderQr().solve(y);
  const double s2 = (y - X * beta).squaredNorm() / (n - (k + 1));
  const Eigen::MatrixXd cov = s2 * (X.transpose() * X).inverse();

  const bayline::v1::Estimate* last_ls = nullptr;
  for (const auto* r : sink.OfKind(Publication::kEstimate)) {
    if (r->publication.estimate().estimator() == "ls") last_ls = &r->publication.estimate();
  }
  ASSERT_NE(last_ls, nullptr);
  ASSERT_EQ(last_ls->value_size(), k + 1);
  EXPECT_TRUE(last_ls->identifiable());
  EXPECT_EQ(last_ls->names(3), "supply");
  for (int j = 0; j <= k; ++j) {
    EXPECT_NEAR(last_ls->value(j), beta(j), 1e-9 * (1 + std::abs(beta(j)))) << j;
    EXPECT_NEAR(last_ls->std_error(j), std::sqrt(cov(j, j)), 1e-7 * std::sqrt(cov(j, j))) << j;
    EXPECT_LT(last_ls->lower(j), beta(j));
    EXPECT_GT(last_ls->upper(j), beta(j));
  }
  EXPECT_DOUBLE_EQ(last_ls->effective_n(), n);
}

}  // namespace
}  // namespace bayline::pipeline

namespace bayline::pipeline {
namespace {

// Gaussian channel, ls: intercept-only least squares, so mean = sample mean and variance = the
// unbiased sample variance, with the chi-square interval (n-1) s^2 / chi2_{1-q}, (n-1) s^2 / chi2_q
// (common practice, no source); here only its ordering around s^2 is checked.
TEST(LeastSquaresTest, GaussianChannelLsIsSampleMeanAndVariance) {
  Pipeline p(DefaultConfig());
  testing::RecordingSink sink;
  std::mt19937_64 rng(4242);
  std::normal_distribution<double> temp(-18.0, 0.7);
  std::vector<double> ys;
  for (uint64_t i = 1; i <= 50; ++i) {
    ys.push_back(temp(rng));
    p.Process(testing::Obs("coldstore/freezer9/temperature", i, ys.back()), testing::kArrival,
              sink);
  }
  double mean = 0;
  for (double y : ys) mean += y;
  mean /= double(ys.size());
  double ss = 0;
  for (double y : ys) ss += (y - mean) * (y - mean);
  const double s2 = ss / double(ys.size() - 1);
  const auto report = p.Ask("coldstore/freezer9/temperature");
  ASSERT_TRUE(report.has_value());
  const auto& ls = report->estimates(0);
  ASSERT_EQ(ls.estimator(), "ls");
  EXPECT_NEAR(ls.value(0), mean, 1e-12 * std::abs(mean));
  EXPECT_NEAR(ls.value(1), s2, 1e-10 * s2);
  EXPECT_NEAR(ls.std_error(0), std::sqrt(s2 / double(ys.size())), 1e-10);
  EXPECT_LT(ls.lower(1), s2);
  EXPECT_GT(ls.upper(1), s2);
  EXPECT_LT(ls.lower(0), mean);
  EXPECT_GT(ls.upper(0), mean);
}

}  // namespace
}  // namespace bayline::pipeline
