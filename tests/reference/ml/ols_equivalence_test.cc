// Standard identities: the gaussian ML mean is the batch mean, and the ML fit of the intercept-only
// normal model equals ordinary least squares on a column of ones (coefficient = mean, ML variance =
// RSS / n). Common practice, no source (any regression text; see REFERENCES.md "Standard
// identities").
#include <gtest/gtest.h>

#include <Eigen/Dense>
#include <cmath>
#include <random>
#include <vector>

#include "estimators/ml/gaussian_ml.h"

namespace bayline::est {
namespace {

bool Rel(double a, double b, double tol) {
  return std::fabs(a - b) <= tol * std::fmax(std::fabs(a), std::fabs(b));
}

TEST(OlsEquivalenceTest, GaussianMlMeanEqualsBatchMeanAndInterceptOnlyOls) {
  for (double offset : {0.0, 1e6, -3e8}) {
    std::mt19937_64 rng(61);
    std::normal_distribution<double> n(offset, 2.5);
    const int count = 10000;
    Eigen::VectorXd y(count);
    GaussianMl g;
    for (int i = 0; i < count; ++i) {
      y(i) = n(rng);
      Sample s;
      s.y = y(i);
      ASSERT_TRUE(g.Update(s).ok());
    }
    long double sum = 0;
    for (int i = 0; i < count; ++i) sum += y(i);
    const double batch_mean = static_cast<double>(sum / count);
    // common practice, no source: ML mean = batch mean
    EXPECT_TRUE(Rel(g.mean(), batch_mean, 1e-10)) << offset;
    // OLS on X = 1 by Householder QR (an independent route); ML variance = RSS / n.
    const Eigen::MatrixXd X = Eigen::MatrixXd::Ones(count, 1);
    const Eigen::VectorXd beta = X.householderQr().solve(y);
    const double rss = (y - X * beta).squaredNorm();
    // common practice, no source: ML coefficients of the intercept-only normal model = OLS
    EXPECT_TRUE(Rel(g.mean(), beta(0), 1e-10)) << offset;
    // The QR residuals lose |offset| / sd digits; compare the variance where that still leaves
    // 1e-10.
    if (offset == 0.0) {
      EXPECT_TRUE(Rel(g.variance_ml(), rss / count, 1e-10));
    }
  }
}

TEST(OlsEquivalenceTest, WeightedMlMeanEqualsWeightedLeastSquares) {
  std::mt19937_64 rng(62);
  std::normal_distribution<double> n(5.0, 1.0);
  std::uniform_real_distribution<double> wd(0.1, 4.0);
  const int count = 5000;
  Eigen::VectorXd y(count), sw(count);
  GaussianMl g;
  for (int i = 0; i < count; ++i) {
    y(i) = n(rng);
    const double w = wd(rng);
    sw(i) = std::sqrt(w);
    Sample s;
    s.y = y(i);
    s.weight = w;
    ASSERT_TRUE(g.Update(s).ok());
  }
  // WLS: minimise sum w (y - b)^2 = OLS of sqrt(w) y on sqrt(w). common practice, no source
  const Eigen::MatrixXd X = sw;
  const Eigen::VectorXd beta = X.householderQr().solve(sw.cwiseProduct(y));
  EXPECT_TRUE(Rel(g.mean(), beta(0), 1e-10));
  const double wrss = (sw.cwiseProduct(y) - X * beta).squaredNorm();
  EXPECT_TRUE(Rel(g.variance_ml(), wrss / sw.squaredNorm(), 1e-10));
}

}  // namespace
}  // namespace bayline::est
