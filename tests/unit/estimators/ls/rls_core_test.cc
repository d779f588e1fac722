// RecursiveLeastSquares / Rls: batch equivalence, exact start, innovations, prediction, rejection.
#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <vector>

#include "estimators/core/distributions.h"
#include "estimators/ls/recursive_least_squares.h"
#include "estimators/ls/rls.h"
#include "tests/unit/estimators/ls/test_util.h"

namespace bayline::est {
namespace {

using testing::BatchLs;
using testing::BitIdentical;
using testing::MakeData;
using testing::MaxRelErr;
using testing::Packed;
using testing::SampleAt;

template <typename Est>
void Feed(Est& est, const testing::Data& d, int from, int to) {
  std::vector<double> buf;
  for (int i = from; i < to; ++i) ASSERT_TRUE(est.Update(SampleAt(d, i, &buf)).ok());
}

// Standard identity (REFERENCES.md: any regression text): RLS without forgetting equals batch OLS.
TEST(RlsTest, MatchesBatchLeastSquaresWithoutForgettingFixedSize) {
  Eigen::VectorXd theta(3);
  theta << 1.5, -2.0, 0.25;
  const auto d = MakeData(200, theta, 0.3, 11);
  RecursiveLeastSquares<3> est;
  std::vector<double> buf;
  for (int i = 0; i < 200; ++i) {
    ASSERT_TRUE(est.Update(SampleAt(d, i, &buf)).ok());
    if (i >= 3 && i % 17 == 0) {
      const Eigen::VectorXd ols = BatchLs(d.x.topRows(i + 1), d.y.head(i + 1));
      EXPECT_LT(MaxRelErr(est.coefficients(), ols), 1e-10) << "after " << i + 1;
    }
  }
}

TEST(RlsTest, MatchesBatchLeastSquaresDynamicAndRuntimeP) {
  Eigen::VectorXd theta = Eigen::VectorXd::LinSpaced(9, -2.0, 3.0);
  const auto d = MakeData(300, theta, 0.5, 12);
  RecursiveLeastSquares<Eigen::Dynamic> dyn(RlsOptions{}, 9);
  Rls rt(RlsOptions{}, 9);
  Feed(dyn, d, 0, 300);
  Feed(rt, d, 0, 300);
  const Eigen::VectorXd ols = BatchLs(d.x, d.y);
  EXPECT_LT(MaxRelErr(dyn.coefficients(), ols), 1e-10);
  EXPECT_LT(MaxRelErr(rt.coefficients(), ols), 1e-10);
  // Residual variance against the batch residuals.
  const double rss = (d.y - d.x * ols).squaredNorm();
  EXPECT_NEAR(dyn.residual_variance(), rss / (300 - 9), 1e-10 * rss / 291);
  // Covariance s^2 (X'X)^{-1}.
  const Eigen::MatrixXd cov = rss / 291 * (d.x.transpose() * d.x).inverse();
  EXPECT_LT((dyn.covariance() - cov).norm() / cov.norm(), 1e-9);
}

// Ill-conditioned design: columns on scales 1e-6..1e6 and two nearly collinear columns. Rotations
// are invariant to column scaling, so agreement with pivoted QR stays tight.
TEST(RlsTest, MatchesBatchOnBadlyScaledNearlyCollinearColumns) {
  std::mt19937_64 rng(13);
  std::normal_distribution<double> g;
  const int n = 400;
  Eigen::MatrixXd x(n, 4);
  Eigen::VectorXd y(n);
  for (int i = 0; i < n; ++i) {
    const double u = g(rng);
    x(i, 0) = 1e6;
    x(i, 1) = 1e-6 * u;
    x(i, 2) = 1e-6 * (u + 1e-5 * g(rng));  // nearly collinear with column 1
    x(i, 3) = g(rng);
    y(i) = 3.0 * x(i, 0) * 1e-6 + 2e6 * x(i, 1) - 1e6 * x(i, 2) + x(i, 3) + 0.01 * g(rng);
  }
  Rls est(RlsOptions{}, 4);
  std::vector<double> buf(4);
  for (int i = 0; i < n; ++i) {
    for (int j = 0; j < 4; ++j) buf[static_cast<std::size_t>(j)] = x(i, j);
    Sample s;
    s.y = y(i);
    s.x = buf;
    ASSERT_TRUE(est.Update(s).ok());
  }
  const Eigen::VectorXd ols = BatchLs(x, y);
  // Condition of the scaled problem is ~1e5, so agreement to ~1e-10 relative is expected.
  EXPECT_LT(MaxRelErr(est.coefficients(), ols), 1e-9)
      << est.coefficients().transpose() << " vs " << ols.transpose();
  EXPECT_FALSE(est.ill_conditioned());
}

TEST(RlsTest, ExactStartReportsNotIdentifiableUntilRegressorsSpan) {
  RecursiveLeastSquares<3> est;
  std::vector<double> x(3);
  Sample s;
  s.x = x;
  // Rows in a 2-dimensional subspace: (1, t, 2t) never identify theta.
  for (int t = 0; t < 50; ++t) {
    x = {1.0, double(t), 2.0 * t};
    s.y = 1.0 + t;
    ASSERT_TRUE(est.Update(s).ok());
    EXPECT_FALSE(est.identifiable()) << t;
  }
  const ParameterReport before = est.Report();
  EXPECT_FALSE(before.identifiable);
  EXPECT_TRUE(std::isnan(before.value[0]));
  Innovation inn;
  RecursiveResidual rr;
  x = {1.0, 3.0, 1.0};  // leaves the subspace
  s.y = 0.5;
  ASSERT_TRUE(est.Update(s, &inn, &rr).ok());
  EXPECT_FALSE(inn.valid);
  EXPECT_FALSE(rr.valid);
  EXPECT_TRUE(est.identifiable());
  // Exactly determined along the data: batch LS on the 51 rows.
  Eigen::MatrixXd xm(51, 3);
  Eigen::VectorXd ym(51);
  for (int t = 0; t < 50; ++t) {
    xm.row(t) << 1.0, t, 2.0 * t;
    ym(t) = 1.0 + t;
  }
  xm.row(50) << 1.0, 3.0, 1.0;
  ym(50) = 0.5;
  const Eigen::VectorXd ols = BatchLs(xm, ym);
  EXPECT_LT(MaxRelErr(est.coefficients(), ols), 1e-10);
}

// Innovations against the closed forms from the batch fit of the previous data:
// prediction x'theta_prev, predictive sd s_prev sqrt(1 + x'(X'X)^{-1}x), and the Brown-Durbin-Evans
// recursive residual (y - x'theta_prev) / sqrt(1 + x'(X'X)^{-1}x) (Brown, Durbin & Evans 1975).
TEST(RlsTest, InnovationAndRecursiveResidualMatchClosedForms) {
  Eigen::VectorXd theta(2);
  theta << 0.5, 1.5;
  const auto d = MakeData(60, theta, 0.2, 14);
  RecursiveLeastSquares<2> est;
  std::vector<double> buf;
  for (int i = 0; i < 60; ++i) {
    Innovation inn;
    RecursiveResidual rr;
    ASSERT_TRUE(est.Update(SampleAt(d, i, &buf), &inn, &rr).ok());
    if (i < 2) {
      EXPECT_FALSE(rr.valid);
      continue;
    }
    const Eigen::MatrixXd xp = d.x.topRows(i);
    const Eigen::VectorXd yp = d.y.head(i);
    const Eigen::VectorXd th = BatchLs(xp, yp);
    const Eigen::VectorXd xi = d.x.row(i).transpose();
    const double q = xi.dot((xp.transpose() * xp).ldlt().solve(xi));
    const double e = d.y(i) - xi.dot(th);
    ASSERT_TRUE(rr.valid);
    EXPECT_NEAR(rr.value, e / std::sqrt(1.0 + q), 1e-10 * (1.0 + std::fabs(e)));
    if (i == 2) {
      EXPECT_FALSE(inn.valid);  // dof was 0 before this observation
      continue;
    }
    const double s2 = (yp - xp * th).squaredNorm() / (i - 2);
    ASSERT_TRUE(inn.valid);
    EXPECT_NEAR(inn.prediction, xi.dot(th), 1e-10);
    EXPECT_NEAR(inn.residual, e, 1e-10);
    EXPECT_NEAR(inn.predictive_sd, std::sqrt(s2 * (1.0 + q)), 1e-10);
    EXPECT_NEAR(inn.standardized, e / std::sqrt(s2 * (1.0 + q)), 1e-9);
    // Student t predictive with i - 2 degrees of freedom (common practice, no source).
    EXPECT_NEAR(inn.log_predictive,
                dist::StudentTLogPdf(inn.standardized, i - 2.0) - std::log(inn.predictive_sd),
                1e-9);
  }
}

TEST(RlsTest, PredictionAndReportMatchClosedForms) {
  Eigen::VectorXd theta(3);
  theta << -1.0, 0.3, 2.0;
  const auto d = MakeData(40, theta, 1.0, 15);
  RecursiveLeastSquares<3> est;
  Feed(est, d, 0, 40);
  const Eigen::VectorXd th = BatchLs(d.x, d.y);
  const double s2 = (d.y - d.x * th).squaredNorm() / 37.0;
  const Eigen::MatrixXd xtx_inv = (d.x.transpose() * d.x).inverse();
  const std::vector<double> x0 = {1.0, 0.7, -1.2};
  const Eigen::Map<const Eigen::VectorXd> xv(x0.data(), 3);
  Prediction pr;
  ASSERT_TRUE(est.Predict(x0, 0.9, &pr).ok());
  ASSERT_TRUE(pr.valid);
  const double q = xv.dot(xtx_inv * xv);
  EXPECT_NEAR(pr.mean, xv.dot(th), 1e-10);
  EXPECT_NEAR(pr.mean_sd, std::sqrt(s2 * q), 1e-10);
  EXPECT_NEAR(pr.sd, std::sqrt(s2 * (1.0 + q)), 1e-10);
  const double t = dist::StudentTQuantile(0.95, 37.0);
  EXPECT_NEAR(pr.upper - pr.mean, t * pr.sd, 1e-9);
  EXPECT_NEAR(pr.mean - pr.lower, t * pr.sd, 1e-9);

  const ParameterReport rep = est.Report(0.99);
  ASSERT_TRUE(rep.identifiable);
  const double t99 = dist::StudentTQuantile(0.995, 37.0);
  for (int j = 0; j < 3; ++j) {
    const auto k = static_cast<std::size_t>(j);
    EXPECT_NEAR(rep.std_error[k], std::sqrt(s2 * xtx_inv(j, j)), 1e-10);
    EXPECT_NEAR(rep.upper[k], th(j) + t99 * rep.std_error[k], 1e-9);
  }
  EXPECT_DOUBLE_EQ(rep.effective_n, 40.0);
  // Gaussian log-likelihood at (theta, RSS/n) (common practice, no source).
  const double rss = s2 * 37.0;
  EXPECT_NEAR(rep.log_likelihood, -20.0 * (std::log(2.0 * M_PI * rss / 40.0) + 1.0), 1e-9);

  const std::vector<double> bad_x = {1.0, 2.0};
  EXPECT_EQ(est.Predict(bad_x, 0.9, &pr).code(), ErrorCode::kWrongRegressorCount);
}

TEST(RlsTest, WeightsEqualRepeatedObservations) {
  // Weight 3 on a row equals that row three times (frequency weights).
  Eigen::VectorXd theta(2);
  theta << 2.0, -1.0;
  const auto d = MakeData(30, theta, 0.5, 16);
  RecursiveLeastSquares<2> weighted, repeated;
  std::vector<double> buf;
  for (int i = 0; i < 30; ++i) {
    const double w = 1.0 + (i % 3);
    ASSERT_TRUE(weighted.Update(SampleAt(d, i, &buf, w)).ok());
    for (int k = 0; k < static_cast<int>(w); ++k)
      ASSERT_TRUE(repeated.Update(SampleAt(d, i, &buf)).ok());
  }
  EXPECT_LT(MaxRelErr(weighted.coefficients(), repeated.coefficients()), 1e-12);
  EXPECT_NEAR(weighted.effective_n(), repeated.effective_n(), 1e-12);
  EXPECT_NEAR(weighted.residual_variance(), repeated.residual_variance(), 1e-12);
}

// Every kind of bad input: typed status, state (bit for bit) and outputs unchanged.
TEST(RlsTest, RejectsBadInputWithoutChangingState) {
  Eigen::VectorXd theta(2);
  theta << 1.0, 2.0;
  const auto d = MakeData(10, theta, 0.1, 17);
  RlsOptions opt;
  opt.forgetting.lambda = 0.95;
  RecursiveLeastSquares<2> est(opt);
  Feed(est, d, 0, 10);
  const auto before = Packed(est.state());
  const double nan = std::numeric_limits<double>::quiet_NaN();
  const double inf = std::numeric_limits<double>::infinity();
  std::vector<double> good = {1.0, 0.5}, nan_x = {1.0, nan}, inf_x = {inf, 0.5}, short_x = {1.0},
                      long_x = {1.0, 2.0, 3.0};
  struct Case {
    const char* name;
    Sample s;
    ErrorCode code;
  };
  auto make = [](double y, const std::vector<double>& x, double w, double t) {
    Sample s;
    s.y = y;
    s.x = x;
    s.weight = w;
    s.time = t;
    return s;
  };
  const Case cases[] = {
      {"nan y", make(nan, good, 1, nan), ErrorCode::kNonFinite},
      {"inf y", make(-inf, good, 1, nan), ErrorCode::kNonFinite},
      {"nan x", make(1, nan_x, 1, nan), ErrorCode::kNonFinite},
      {"inf x", make(1, inf_x, 1, nan), ErrorCode::kNonFinite},
      {"short x", make(1, short_x, 1, nan), ErrorCode::kWrongRegressorCount},
      {"long x", make(1, long_x, 1, nan), ErrorCode::kWrongRegressorCount},
      {"zero weight", make(1, good, 0, nan), ErrorCode::kInvalidWeight},
      {"negative weight", make(1, good, -2, nan), ErrorCode::kInvalidWeight},
      {"nan weight", make(1, good, nan, nan), ErrorCode::kNonFinite},
      {"inf time", make(1, good, 1, inf), ErrorCode::kNonFinite},
      {"overflowing y", make(1e300, good, 1e300, nan), ErrorCode::kNumericalFailure},
  };
  for (const Case& c : cases) {
    Innovation inn;
    inn.prediction = 42.0;
    RecursiveResidual rr;
    rr.value = 43.0;
    const Status st = est.Update(c.s, &inn, &rr);
    EXPECT_EQ(st.code(), c.code) << c.name << ": " << st.ToString();
    EXPECT_FALSE(st.message().empty()) << c.name;
    EXPECT_TRUE(BitIdentical(Packed(est.state()), before)) << c.name;
    EXPECT_EQ(inn.prediction, 42.0) << c.name;
    EXPECT_EQ(rr.value, 43.0) << c.name;
  }
  // UpdateExtended without the option is a configuration error, also without effect.
  std::vector<double> lo = {0.0, 0.0};
  EXPECT_EQ(est.UpdateExtended(make(1, good, 1, nan), lo, 0.0).code(), ErrorCode::kInvalidConfig);
  EXPECT_TRUE(BitIdentical(Packed(est.state()), before));
}

TEST(RlsTest, ResetReturnsToFreshState) {
  Eigen::VectorXd theta(2);
  theta << 1.0, 2.0;
  const auto d = MakeData(20, theta, 0.1, 18);
  Rls est(RlsOptions{}, 2);
  Feed(est, d, 0, 20);
  est.Reset();
  EXPECT_FALSE(est.identifiable());
  EXPECT_TRUE(BitIdentical(Packed(est.state()), Packed(Rls(RlsOptions{}, 2).state())));
}

}  // namespace
}  // namespace bayline::est
