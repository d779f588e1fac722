#include "estimators/map/dynamic_linear_model.h"

#include <gtest/gtest.h>

#include <Eigen/Dense>
#include <cmath>
#include <numbers>
#include <random>
#include <vector>

#include "estimators/map/nig_regression.h"
#include "tests/unit/estimators/map/map_test_util.h"

namespace bayline::est {
namespace {

using testing::Packed;
using testing::RelNear;
using testing::SameBits;

struct Series {
  Eigen::MatrixXd X;
  Eigen::VectorXd y;
};

Series RandomWalkRegression(int n, int p, double V, const std::vector<double>& W,
                            std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> N(0, 1);
  Series s{Eigen::MatrixXd(n, p), Eigen::VectorXd(n)};
  Eigen::VectorXd beta = Eigen::VectorXd::LinSpaced(p, 1.0, 2.0);
  for (int t = 0; t < n; ++t) {
    for (int j = 0; j < p; ++j) beta(j) += std::sqrt(W[j]) * N(rng);
    s.X(t, 0) = 1.0;
    for (int j = 1; j < p; ++j) s.X(t, j) = N(rng);
    s.y(t) = s.X.row(t).dot(beta) + std::sqrt(V) * N(rng);
  }
  return s;
}

template <int P>
Status Feed(DynamicLinearModel<P>& f, const Series& s, int t, Innovation* inn = nullptr) {
  std::vector<double> row(s.X.cols());
  for (int j = 0; j < s.X.cols(); ++j) row[j] = s.X(t, j);
  Sample smp;
  smp.y = s.y(t);
  smp.x = row;
  return f.Update(smp, inn);
}

TEST(DynamicLinearModelTest, MatchesCovarianceFormKalmanFilter) {
  // The textbook covariance recursion (Joseph form) run in the test as an independent algorithm.
  const int n = 300, p = 3;
  const double V = 0.5;
  const std::vector<double> W = {1e-3, 1e-2, 0.0};
  const Series s = RandomWalkRegression(n, p, V, W, 1);
  DynamicLinearModel<3>::Options o;
  o.obs_variance = V;
  o.state_variance = W;
  o.diffuse = false;
  o.initial_mean = {0.5, 0.0, -1.0};
  o.initial_variance = {4.0, 2.0, 1.0};
  DynamicLinearModel<3> f(o);
  Eigen::Vector3d m(0.5, 0.0, -1.0);
  Eigen::Matrix3d C = Eigen::Vector3d(4.0, 2.0, 1.0).asDiagonal();
  const Eigen::Matrix3d Wm = Eigen::Vector3d(W[0], W[1], W[2]).asDiagonal();
  double ll = 0;
  for (int t = 0; t < n; ++t) {
    if (t > 0) C += Wm;
    const Eigen::Vector3d x = s.X.row(t).transpose();
    const double Q = x.dot(C * x) + V, e = s.y(t) - x.dot(m);
    const Eigen::Vector3d K = C * x / Q;
    const Eigen::Matrix3d IKx = Eigen::Matrix3d::Identity() - K * x.transpose();
    m += K * e;
    C = IKx * C * IKx.transpose() + V * K * K.transpose();
    ll += -0.5 * std::log(2 * std::numbers::pi * Q) - 0.5 * e * e / Q;
    Innovation inn;
    ASSERT_TRUE(Feed(f, s, t, &inn).ok());
    EXPECT_TRUE(RelNear(inn.predictive_sd * inn.predictive_sd, Q, 1e-11));
  }
  const Eigen::Matrix3d Cf = f.covariance();
  for (int i = 0; i < 3; ++i) {
    EXPECT_TRUE(RelNear(f.mean()(i), m(i), 1e-10));
    for (int j = 0; j < 3; ++j) EXPECT_TRUE(RelNear(Cf(i, j), C(i, j), 1e-9, 1e-12));
  }
  EXPECT_TRUE(RelNear(f.Report().log_likelihood, ll, 1e-11));
}

TEST(DynamicLinearModelTest, StaticCoefficientsGiveTheBatchGaussianPosterior) {
  // W = 0: a regression with known noise variance; conjugate gaussian closed form (any Bayesian
  // regression text): C_n^{-1} = C1^{-1} + X'X / V, m_n = C_n (C1^{-1} m1 + X'y / V),
  // y ~ N(X m1, X C1 X' + V I).
  const int n = 50;
  const double V = 2.0;
  const Series s = RandomWalkRegression(n, 2, V, {0.0, 0.0}, 2);
  DynamicLinearModel<>::Options o;
  o.p = 2;
  o.obs_variance = V;
  o.diffuse = false;
  o.initial_mean = {1.0, 1.0};
  o.initial_variance = {3.0, 0.5};
  DynamicLinearModel<> f(o);
  for (int t = 0; t < n; ++t) ASSERT_TRUE(Feed(f, s, t).ok());
  const Eigen::Matrix2d C1inv = Eigen::Vector2d(1 / 3.0, 2.0).asDiagonal();
  const Eigen::Matrix2d Cn = (C1inv + s.X.transpose() * s.X / V).inverse();
  const Eigen::Vector2d mn = Cn * (C1inv * Eigen::Vector2d(1, 1) + s.X.transpose() * s.y / V);
  const Eigen::MatrixXd Sigma = s.X * Eigen::Vector2d(3.0, 0.5).asDiagonal() * s.X.transpose() +
                                V * Eigen::MatrixXd::Identity(n, n);
  const Eigen::VectorXd r = s.y - s.X * Eigen::Vector2d(1, 1);
  Eigen::LLT<Eigen::MatrixXd> llt(Sigma);
  const double logdet = 2 * llt.matrixL().toDenseMatrix().diagonal().array().log().sum();
  const double ll =
      -0.5 * n * std::log(2 * std::numbers::pi) - 0.5 * logdet - 0.5 * r.dot(llt.solve(r));
  for (int i = 0; i < 2; ++i) EXPECT_TRUE(RelNear(f.mean()(i), mn(i), 1e-11));
  const Eigen::MatrixXd Cf = f.covariance();
  for (int i = 0; i < 2; ++i)
    for (int j = 0; j < 2; ++j) EXPECT_TRUE(RelNear(Cf(i, j), Cn(i, j), 1e-10, 1e-14));
  EXPECT_TRUE(RelNear(f.Report().log_likelihood, ll, 1e-11));
  const ParameterReport rep = f.Report();
  EXPECT_TRUE(RelNear(rep.std_error[1], std::sqrt(Cn(1, 1)), 1e-11));
  // z_0.975 = 1.959963984540054 (from memory).
  EXPECT_TRUE(RelNear(rep.upper[1] - rep.value[1], 1.959963984540054 * rep.std_error[1], 1e-12));
}

TEST(DynamicLinearModelTest, LearnedVarianceWithStaticCoefficientsIsTheNigRegression) {
  // With W* = 0 the variance-learning tracker is the normal-inverse-gamma regression with
  // Lambda0 = C1*^{-1}: two different algorithms (covariance-factor Kalman vs information-factor
  // Givens) for the same posterior.
  const Series s = RandomWalkRegression(60, 3, 0.7, {0, 0, 0}, 8);
  DynamicLinearModel<3>::Options o;
  o.learn_obs_variance = true;
  o.obs_variance_shape = 2.0;
  o.obs_variance_scale = 1.5;
  o.diffuse = false;
  o.initial_mean = {0.5, -1.0, 0.0};
  o.initial_variance = {2.0, 0.5, 4.0};
  DynamicLinearModel<3> f(o);
  NigRegression<3>::Options no;
  no.prior_mean = {0.5, -1.0, 0.0};
  no.prior_precision = {0.5, 2.0, 0.25};
  no.a0 = 2.0;
  no.b0 = 1.5;
  NigRegression<3> nig(no);
  for (int t = 0; t < 60; ++t) {
    Innovation a, b;
    ASSERT_TRUE(Feed(f, s, t, &a).ok());
    std::vector<double> row = {s.X(t, 0), s.X(t, 1), s.X(t, 2)};
    Sample smp;
    smp.y = s.y(t);
    smp.x = row;
    ASSERT_TRUE(nig.Update(smp, &b).ok());
    EXPECT_TRUE(RelNear(a.log_predictive, b.log_predictive, 1e-10));
    EXPECT_TRUE(RelNear(a.standardized, b.standardized, 1e-8, 1e-6));
    EXPECT_TRUE(RelNear(a.predictive_sd, b.predictive_sd, 1e-10));
  }
  const ParameterReport a = f.Report(0.9), b = nig.Report(0.9);
  ASSERT_TRUE(a.identifiable);
  for (int j = 0; j < 3; ++j) {
    EXPECT_TRUE(RelNear(a.value[j], b.value[j], 1e-10));
    EXPECT_TRUE(RelNear(a.std_error[j], b.std_error[j], 1e-10));
    EXPECT_TRUE(RelNear(a.lower[j], b.lower[j], 1e-10));
    EXPECT_TRUE(RelNear(a.upper[j], b.upper[j], 1e-10));
  }
  EXPECT_TRUE(RelNear(a.log_likelihood, b.log_likelihood, 1e-10));
  EXPECT_TRUE(RelNear(f.state().v_scale, nig.b(), 1e-10));
  const double x[3] = {1.0, 0.3, -2.0};
  const Prediction pa = f.Predict(x, 0.8), pb = nig.Predict(x, 0.8);
  EXPECT_TRUE(RelNear(pa.lower, pb.lower, 1e-10));
  EXPECT_TRUE(RelNear(pa.mean_sd, pb.mean_sd, 1e-10));
  const Eigen::Matrix3d ca = f.covariance();
  const Eigen::Matrix3d cb = nig.b() / (nig.a() - 1) * nig.precision_inverse();
  for (int i = 0; i < 3; ++i)
    for (int j = 0; j < 3; ++j) EXPECT_TRUE(RelNear(ca(i, j), cb(i, j), 1e-9, 1e-12));
}

TEST(DynamicLinearModelTest, LongIllConditionedRunStaysPositiveDefinite) {
  // 1e5 updates, nearly collinear regressors (x2 = x1 + 1e-6 noise), tiny drift: the covariance
  // factor must stay finite with a non-negative diagonal, and the innovations standard.
  DynamicLinearModel<4>::Options o;
  o.obs_variance = 1e-2;
  o.state_variance = {1e-10, 1e-12, 1e-12, 0.0};
  DynamicLinearModel<4> f(o);
  std::mt19937_64 rng(3);
  std::normal_distribution<double> N(0, 1);
  double s2 = 0;
  const int n = 100000;
  for (int t = 0; t < n; ++t) {
    const double a = N(rng);
    const double x[4] = {1.0, a, a + 1e-6 * N(rng), 1e3 * N(rng)};
    Sample s;
    s.x = x;
    s.y = 1.0 + 2.0 * x[1] - x[2] + 1e-3 * x[3] + 0.1 * N(rng);
    Innovation inn;
    ASSERT_TRUE(f.Update(s, &inn).ok()) << t;
    if (t >= 1000) s2 += inn.standardized * inn.standardized;
  }
  const Eigen::Matrix4d C = f.covariance();
  EXPECT_TRUE(C.allFinite());
  EXPECT_TRUE(f.state().U.diagonal().minCoeff() >= 0);
  Eigen::SelfAdjointEigenSolver<Eigen::Matrix4d> eig(C);
  EXPECT_GT(eig.eigenvalues().minCoeff(), 0.0);
  EXPECT_NEAR(s2 / (n - 1000), 1.0, 0.02);
  EXPECT_NEAR(f.mean()(1) + f.mean()(2), 1.0, 1e-3);  // the identified combination
}

TEST(DynamicLinearModelTest, TracksDriftingCoefficient) {
  DynamicLinearModel<2>::Options o;
  o.obs_variance = 0.01;
  o.state_variance = {1e-4, 1e-4};
  DynamicLinearModel<2> f(o);
  std::mt19937_64 rng(4);
  std::normal_distribution<double> N(0, 1);
  for (int t = 0; t < 2000; ++t) {
    const double slope = 1.0 + t / 1000.0;  // slow ramp from 1 to 3
    const double x[2] = {1.0, N(rng)};
    Sample s;
    s.x = x;
    s.y = 0.2 + slope * x[1] + 0.1 * N(rng);
    ASSERT_TRUE(f.Update(s).ok());
  }
  EXPECT_NEAR(f.mean()(1), 2.999, 0.05);
}

TEST(DynamicLinearModelTest, RejectsBadInputAndChangesNothing) {
  DynamicLinearModel<2>::Options o;
  o.state_variance = {0.1, 0.1};
  DynamicLinearModel<2> f(o);
  const Series s = RandomWalkRegression(5, 2, 1.0, {0.1, 0.1}, 5);
  for (int t = 0; t < 5; ++t) ASSERT_TRUE(Feed(f, s, t).ok());
  const std::vector<double> before = Packed(f.state());
  const double good[2] = {1, 1}, nan_x[2] = {1, std::nan("")}, one[1] = {1};
  auto expect = [&](Sample smp, ErrorCode code) {
    const Status st = f.Update(smp);
    EXPECT_EQ(st.code(), code) << st.ToString();
    EXPECT_TRUE(SameBits(Packed(f.state()), before));
  };
  Sample b;
  b.y = std::nan("");
  b.x = good;
  expect(b, ErrorCode::kNonFinite);
  b.y = 1;
  b.x = nan_x;
  expect(b, ErrorCode::kNonFinite);
  b.x = one;
  expect(b, ErrorCode::kWrongRegressorCount);
  b.x = good;
  b.weight = 0;
  expect(b, ErrorCode::kInvalidWeight);
  b.weight = 1e-320;  // V / w overflows
  expect(b, ErrorCode::kNumericalFailure);
}

TEST(DynamicLinearModelTest, CaptureRestoreContinueIsBitIdenticalAndBadStatesRejected) {
  DynamicLinearModel<>::Options o;
  o.p = 3;
  o.state_variance = {0.01, 0.02, 0.0};
  DynamicLinearModel<> a(o), b(o);
  const Series s = RandomWalkRegression(60, 3, 1.0, o.state_variance, 6);
  for (int t = 0; t < 30; ++t) ASSERT_TRUE(Feed(a, s, t).ok());
  const std::vector<double> packed = Packed(a.state());
  DynamicLinearModel<>::State st;
  StateReader r(packed);
  ASSERT_TRUE(st.Unpack(r).ok());
  ASSERT_TRUE(b.Restore(st).ok());
  for (int t = 30; t < 60; ++t) {
    Innovation ia, ib;
    ASSERT_TRUE(Feed(a, s, t, &ia).ok());
    ASSERT_TRUE(Feed(b, s, t, &ib).ok());
    EXPECT_EQ(ia.standardized, ib.standardized);
  }
  EXPECT_TRUE(SameBits(Packed(a.state()), Packed(b.state())));

  std::vector<double> cut(packed.begin(), packed.end() - 1);
  StateReader rc(cut);
  EXPECT_EQ(st.Unpack(rc).code(), ErrorCode::kInvalidState);
  DynamicLinearModel<>::State bad = a.state();
  bad.U(2, 1) = 0.5;
  EXPECT_EQ(a.Restore(bad).code(), ErrorCode::kInvalidState);
  bad = a.state();
  bad.m(0) = INFINITY;
  EXPECT_EQ(a.Restore(bad).code(), ErrorCode::kInvalidState);
  DynamicLinearModel<>::Options lo = o;
  lo.learn_obs_variance = true;
  DynamicLinearModel<> learning(lo);
  EXPECT_EQ(learning.Restore(a.state()).code(), ErrorCode::kInvalidState);  // no V posterior
  DynamicLinearModel<2> two(DynamicLinearModel<2>::Options{});
  DynamicLinearModel<2>::State st2;
  StateReader r2(packed);
  EXPECT_EQ(st2.Unpack(r2).code(), ErrorCode::kInvalidState);  // p = 3 into a p = 2 model
  EXPECT_TRUE(SameBits(Packed(a.state()), Packed(b.state())));
}

TEST(DynamicLinearModelTest, PredictionAndOptions) {
  DynamicLinearModel<2>::Options o;
  o.obs_variance = 0.25;
  DynamicLinearModel<2> f(o);
  const Series s = RandomWalkRegression(40, 2, 0.25, {0, 0}, 7);
  for (int t = 0; t < 40; ++t) ASSERT_TRUE(Feed(f, s, t).ok());
  const double x[2] = {1.0, 0.5};
  const Prediction p = f.Predict(x, 0.9);
  ASSERT_TRUE(p.valid);
  const Eigen::Vector2d xv(1.0, 0.5);
  EXPECT_TRUE(RelNear(p.mean_sd * p.mean_sd, xv.dot(f.covariance() * xv), 1e-12));
  EXPECT_TRUE(RelNear(p.sd * p.sd, p.mean_sd * p.mean_sd + 0.25, 1e-12));
  EXPECT_TRUE(RelNear(p.upper - p.mean, 1.6448536269514722 * p.sd, 1e-12));  // z_0.95 from memory

  DynamicLinearModel<2>::Options bad;
  bad.obs_variance = 0;
  EXPECT_EQ(bad.Validate().code(), ErrorCode::kInvalidConfig);
  bad = {};
  bad.state_variance = {1.0};
  EXPECT_EQ(bad.Validate().code(), ErrorCode::kInvalidConfig);
  bad = {};
  bad.diffuse = false;  // initial variance missing
  EXPECT_EQ(bad.Validate().code(), ErrorCode::kInvalidConfig);
  bad = {};
  bad.p = 3;
  EXPECT_EQ(bad.Validate().code(), ErrorCode::kInvalidConfig);
  bad = {};
  bad.learn_obs_variance = true;
  bad.obs_variance = 0;  // ignored when learning
  EXPECT_TRUE(bad.Validate().ok());
  bad.obs_variance_scale = 0;
  EXPECT_EQ(bad.Validate().code(), ErrorCode::kInvalidConfig);
}

}  // namespace
}  // namespace bayline::est
