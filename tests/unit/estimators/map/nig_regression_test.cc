#include "estimators/map/nig_regression.h"

#include <gtest/gtest.h>

#include <Eigen/Dense>
#include <cmath>
#include <numbers>
#include <random>
#include <vector>

#include "tests/unit/estimators/map/map_test_util.h"

namespace bayline::est {
namespace {

using testing::Packed;
using testing::RelNear;
using testing::SameBits;

struct Data {
  Eigen::MatrixXd X;
  Eigen::VectorXd y, w;
};

Data MakeData(int n, int p, std::uint64_t seed, bool weighted = false) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> N(0, 1);
  std::uniform_real_distribution<double> U(0.5, 2.0);
  Data d{Eigen::MatrixXd(n, p), Eigen::VectorXd(n), Eigen::VectorXd::Ones(n)};
  Eigen::VectorXd beta(p);
  for (int j = 0; j < p; ++j) beta(j) = 3.0 * N(rng);
  for (int i = 0; i < n; ++i) {
    d.X(i, 0) = 1.0;
    for (int j = 1; j < p; ++j) d.X(i, j) = 2.0 * N(rng) + j;
    if (weighted) d.w(i) = U(rng);
    d.y(i) = d.X.row(i).dot(beta) + 0.7 * N(rng) / std::sqrt(d.w(i));
  }
  return d;
}

template <int P>
Status Feed(NigRegression<P>& est, const Data& d, int i, Innovation* inn = nullptr) {
  Sample s;
  s.y = d.y(i);
  std::vector<double> row(d.X.cols());
  for (int j = 0; j < d.X.cols(); ++j) row[j] = d.X(i, j);
  s.x = row;
  s.weight = d.w(i);
  return est.Update(s, inn);
}

// Batch conjugate posterior (closed form) for the default diagonal prior.
struct Batch {
  Eigen::MatrixXd Lambda;
  Eigen::VectorXd m;
  double a, b, log_ml;
};

Batch BatchPosterior(const Data& d, int n, const Eigen::VectorXd& m0, const Eigen::VectorXd& lam0,
                     double a0, double b0) {
  const Eigen::MatrixXd X = d.X.topRows(n);
  const Eigen::VectorXd y = d.y.head(n), w = d.w.head(n);
  Batch r;
  const Eigen::MatrixXd L0 = lam0.asDiagonal();
  r.Lambda = L0 + X.transpose() * w.asDiagonal() * X;
  Eigen::LLT<Eigen::MatrixXd> llt(r.Lambda);
  r.m = llt.solve(L0 * m0 + X.transpose() * w.asDiagonal() * y);
  r.a = a0 + 0.5 * n;
  r.b = b0 + 0.5 * (y.dot(w.asDiagonal() * y) + m0.dot(L0 * m0) - r.m.dot(r.Lambda * r.m));
  // Closed-form log marginal likelihood of the NIG model (any Bayesian regression text):
  // log p(y) = -n/2 log 2pi + 1/2 sum log w + 1/2 log|L0| - 1/2 log|Ln| + a0 log b0 - an log bn
  //            + lgamma(an) - lgamma(a0).
  const double logdet_n = 2.0 * llt.matrixL().toDenseMatrix().diagonal().array().log().sum();
  r.log_ml = -0.5 * n * std::log(2 * std::numbers::pi) + 0.5 * w.array().log().sum() +
             0.5 * lam0.array().log().sum() - 0.5 * logdet_n + a0 * std::log(b0) -
             r.a * std::log(r.b) + std::lgamma(r.a) - std::lgamma(a0);
  return r;
}

TEST(NigRegressionTest, FlatPriorModeEqualsOrdinaryLeastSquares) {
  for (std::uint64_t seed : {1u, 2u, 3u}) {
    const Data d = MakeData(60, 3, seed);
    NigRegression<3>::Options o;
    o.flat_prior = true;
    NigRegression<3> est(o);
    for (int i = 0; i < 60; ++i) ASSERT_TRUE(Feed(est, d, i).ok());
    // Under a flat prior the posterior mode is the ML / OLS estimate: common practice, no source.
    const Eigen::VectorXd ols = d.X.colPivHouseholderQr().solve(d.y);
    const ParameterReport r = est.Report();
    ASSERT_TRUE(r.identifiable);
    for (int j = 0; j < 3; ++j) EXPECT_TRUE(RelNear(r.value[j], ols(j), 1e-10));
    // 2b is the residual sum of squares and a = (n - p) / 2 (flat prior): common practice, no
    // source.
    const double rss = (d.y - d.X * ols).squaredNorm();
    EXPECT_TRUE(RelNear(2 * est.b(), rss, 1e-10));
    EXPECT_DOUBLE_EQ(est.a(), 0.5 * (60 - 3));
  }
}

TEST(NigRegressionTest, FlatPriorDynamicSizeEqualsOrdinaryLeastSquares) {
  const Data d = MakeData(200, 7, 11);
  NigRegression<>::Options o;
  o.p = 7;
  o.flat_prior = true;
  NigRegression<> est(o);
  for (int i = 0; i < 200; ++i) ASSERT_TRUE(Feed(est, d, i).ok());
  const Eigen::VectorXd ols = d.X.colPivHouseholderQr().solve(d.y);  // common practice, no source
  const ParameterReport r = est.Report();
  for (int j = 0; j < 7; ++j) EXPECT_TRUE(RelNear(r.value[j], ols(j), 1e-10));
}

TEST(NigRegressionTest, FlatPriorIsNotIdentifiedUntilMoreObservationsThanCoefficients) {
  const Data d = MakeData(5, 3, 4);
  NigRegression<3>::Options o;
  o.flat_prior = true;
  NigRegression<3> est(o);
  for (int i = 0; i < 5; ++i) {
    Innovation inn;
    ASSERT_TRUE(Feed(est, d, i, &inn).ok());
    // The predictive before observation i is proper once i > p (i observations, a = (i - p)/2 > 0).
    EXPECT_EQ(inn.valid, i > 3) << i;
    EXPECT_EQ(est.proper(), i + 1 > 3) << i;
  }
  NigRegression<3> fresh(o);
  EXPECT_FALSE(fresh.Report().identifiable);
  EXPECT_TRUE(std::isnan(fresh.Report().value[0]));
}

TEST(NigRegressionTest, ConjugateUpdatesMatchBatchClosedForm) {
  const Data d = MakeData(80, 3, 5, /*weighted=*/true);
  NigRegression<3>::Options o;
  o.prior_mean = {1.0, -2.0, 0.5};
  o.prior_precision = {0.5, 2.0, 1.0};
  o.a0 = 2.0;
  o.b0 = 1.5;
  NigRegression<3> est(o);
  double sum_log_pred = 0;
  for (int i = 0; i < 80; ++i) {
    Innovation inn;
    ASSERT_TRUE(Feed(est, d, i, &inn).ok());
    ASSERT_TRUE(inn.valid);
    sum_log_pred += inn.log_predictive;
  }
  const Batch b = BatchPosterior(d, 80, Eigen::Vector3d(1.0, -2.0, 0.5),
                                 Eigen::Vector3d(0.5, 2.0, 1.0), 2.0, 1.5);
  const Eigen::Vector3d m = est.mean();
  for (int j = 0; j < 3; ++j) EXPECT_TRUE(RelNear(m(j), b.m(j), 1e-11));
  EXPECT_DOUBLE_EQ(est.a(), b.a);
  EXPECT_TRUE(RelNear(est.b(), b.b, 1e-10));
  const Eigen::Matrix3d vinv = est.precision_inverse();
  const Eigen::MatrixXd vinv_batch = b.Lambda.inverse();
  for (int i = 0; i < 3; ++i)
    for (int j = 0; j < 3; ++j) EXPECT_TRUE(RelNear(vinv(i, j), vinv_batch(i, j), 1e-10, 1e-12));
  // The prequential sum of one-step log predictive densities equals the batch log marginal
  // likelihood (chain rule of probability).
  const ParameterReport r = est.Report();
  EXPECT_TRUE(RelNear(r.log_likelihood, b.log_ml, 1e-10));
  EXPECT_TRUE(RelNear(sum_log_pred, b.log_ml, 1e-10));
  // Posterior sd of beta_j: sqrt(b / (a - 1) (Lambda^{-1})_jj) (multivariate t marginal).
  for (int j = 0; j < 3; ++j) {
    EXPECT_TRUE(RelNear(r.std_error[j], std::sqrt(b.b / (b.a - 1) * vinv_batch(j, j)), 1e-10));
  }
  EXPECT_DOUBLE_EQ(r.effective_n, d.w.sum());
}

TEST(NigRegressionTest, DefaultPriorMarginalLikelihoodMatchesClosedForm) {
  const Data d = MakeData(40, 2, 6);
  NigRegression<2> est(NigRegression<2>::Options{});
  for (int i = 0; i < 40; ++i) ASSERT_TRUE(Feed(est, d, i).ok());
  const Batch b =
      BatchPosterior(d, 40, Eigen::Vector2d::Zero(), Eigen::Vector2d::Constant(1e-6), 1e-3, 1e-3);
  EXPECT_TRUE(RelNear(est.Report().log_likelihood, b.log_ml, 1e-9));
  EXPECT_TRUE(RelNear(est.mean()(1), b.m(1), 1e-10));
}

TEST(NigRegressionTest, IllConditionedPolynomialStaysAccurate) {
  // Regressors 1, t, t^2, t^3 with t in [100, 101]: the condition number of X is about 1e13.
  std::mt19937_64 rng(7);
  std::normal_distribution<double> N(0, 1);
  const int n = 400;
  Eigen::MatrixXd X(n, 4);
  Eigen::VectorXd y(n);
  for (int i = 0; i < n; ++i) {
    const double t = 100.0 + i / double(n);
    X.row(i) << 1.0, t, t * t, t * t * t;
    y(i) = 1.0 + 0.01 * N(rng) + 0.5 * (t - 100.0);
  }
  NigRegression<4>::Options o;
  o.flat_prior = true;
  NigRegression<4> est(o);
  for (int i = 0; i < n; ++i) {
    const std::vector<double> row = {X(i, 0), X(i, 1), X(i, 2), X(i, 3)};
    Sample s;
    s.y = y(i);
    s.x = row;
    ASSERT_TRUE(est.Update(s).ok());
  }
  ASSERT_TRUE(est.proper());
  // Fitted values agree with a rank-revealing batch QR (common practice, no source); coefficients
  // of such a basis are individually ill-determined, fitted values are not.
  const Eigen::VectorXd ols = X.colPivHouseholderQr().solve(y);
  const Eigen::Vector4d m = est.mean();
  for (int i = 0; i < n; i += 37) {
    EXPECT_NEAR(X.row(i).dot(m), X.row(i).dot(ols), 1e-6);
  }
  const ParameterReport r = est.Report();
  for (int j = 0; j < 4; ++j) {
    EXPECT_TRUE(std::isfinite(r.std_error[j]) && r.std_error[j] > 0);
    EXPECT_TRUE(std::isfinite(r.lower[j]) && r.lower[j] < r.upper[j]);
  }
  const Eigen::Matrix4d V = est.precision_inverse();
  EXPECT_TRUE(V.allFinite());
  EXPECT_TRUE(V.diagonal().minCoeff() > 0);
}

TEST(NigRegressionTest, DiscountOneIsTheExactPosterior) {
  const Data d = MakeData(50, 2, 8);
  NigRegression<2>::Options o;
  NigRegression<2> plain(o);
  o.discount.lambda = 1.0;
  NigRegression<2> discounted(o);
  for (int i = 0; i < 50; ++i) {
    ASSERT_TRUE(Feed(plain, d, i).ok());
    ASSERT_TRUE(Feed(discounted, d, i).ok());
  }
  EXPECT_TRUE(SameBits(Packed(plain.state()), Packed(discounted.state())));
}

TEST(NigRegressionTest, DiscountMatchesGeometricallyWeightedClosedForm) {
  // Power prior n_t = delta n_{t-1} + (1 - delta) n_0 unrolls to n_t = n_0 + sum delta^(t-i) s_i
  // for the data's natural statistics s_i; check against that batch form.
  const Data d = MakeData(120, 3, 9);
  const double delta = 0.95;
  NigRegression<3>::Options o;
  o.prior_precision = {0.3, 0.3, 0.3};
  o.a0 = 1.0;
  o.b0 = 2.0;
  o.discount.lambda = delta;
  NigRegression<3> est(o);
  for (int i = 0; i < 120; ++i) ASSERT_TRUE(Feed(est, d, i).ok());
  Eigen::Matrix3d Lambda = 0.3 * Eigen::Matrix3d::Identity();
  Eigen::Vector3d Lm = Eigen::Vector3d::Zero();
  double S = 2 * 2.0, a = 1.0, weight_sum = 0;
  for (int i = 0; i < 120; ++i) {
    const double f = std::pow(delta, 119 - i);
    Lambda += f * d.X.row(i).transpose() * d.X.row(i);
    Lm += f * d.X.row(i).transpose() * d.y(i);
    S += f * d.y(i) * d.y(i);
    a += 0.5 * f;
    weight_sum += f;
  }
  const Eigen::Vector3d m = Lambda.llt().solve(Lm);
  const double b = 0.5 * (S - m.dot(Lambda * m));
  const Eigen::Vector3d got = est.mean();
  for (int j = 0; j < 3; ++j) EXPECT_TRUE(RelNear(got(j), m(j), 1e-10));
  EXPECT_TRUE(RelNear(est.a(), a, 1e-12));
  EXPECT_TRUE(RelNear(est.b(), b, 1e-9));
  EXPECT_TRUE(RelNear(est.Report().effective_n, weight_sum, 1e-12));
}

TEST(NigRegressionTest, LongDiscountedIllConditionedRunMatchesWeightedBatchQr) {
  // 1e5 discounted updates (delta = 0.99) on nearly collinear regressors (x2 = x1 + 1e-4 noise).
  // The power prior unrolls to: prior rows at full weight plus data rows weighted delta^(n-i); rows
  // older than 4000 steps weigh < 0.99^4000 = 3e-18 and are left out of the batch. The batch is a
  // rank-revealing QR of the stacked weighted rows (common practice, no source).
  const int n = 100000, window = 4000;
  const double delta = 0.99;
  NigRegression<3>::Options o;
  o.prior_precision = {1e-4, 1e-4, 1e-4};
  o.discount.lambda = delta;
  NigRegression<3> est(o);
  std::mt19937_64 rng(15);
  std::normal_distribution<double> N(0, 1);
  Eigen::MatrixXd A(window + 3, 3);
  Eigen::VectorXd rhs(window + 3);
  A.topRows(3) = 1e-2 * Eigen::Matrix3d::Identity();  // sqrt(Lambda0), prior mean 0
  rhs.head(3).setZero();
  for (int i = 0; i < n; ++i) {
    const double u = N(rng);
    const double x[3] = {1.0, u, u + 1e-4 * N(rng)};
    Sample s;
    s.x = x;
    s.y = 2.0 + 3.0 * x[1] - 1.0 * x[2] + 0.01 * N(rng);
    ASSERT_TRUE(est.Update(s).ok()) << i;
    if (i >= n - window) {
      const int r = 3 + i - (n - window);
      const double f = std::sqrt(std::pow(delta, n - 1 - i));
      A.row(r) << f * x[0], f * x[1], f * x[2];
      rhs(r) = f * s.y;
    }
  }
  const Eigen::VectorXd batch = A.colPivHouseholderQr().solve(rhs);
  const Eigen::Vector3d m = est.mean();
  for (int j = 0; j < 3; ++j) EXPECT_TRUE(RelNear(m(j), batch(j), 1e-7)) << j;
  EXPECT_TRUE(est.state().factor.allFinite());
  EXPECT_GT(est.state().factor.diagonal().minCoeff(), 0.0);
  EXPECT_TRUE(RelNear(est.Report().effective_n, 1.0 / (1.0 - delta), 1e-10));
}

TEST(NigRegressionTest, HalfLifeDiscountUsesElapsedTime) {
  // Two observations 10 s apart with a 10 s half-life: the first is discounted by 1/2.
  NigRegression<1>::Options o;
  o.flat_prior = true;
  o.discount.half_life = 10.0;
  NigRegression<1> est(o);
  const double x[1] = {1.0};
  Sample s;
  s.x = x;
  s.y = 2.0;
  s.time = 100.0;
  ASSERT_TRUE(est.Update(s).ok());
  s.y = 5.0;
  s.time = 110.0;
  ASSERT_TRUE(est.Update(s).ok());
  // Weighted mean (0.5 * 2 + 5) / 1.5 = 4 (flat prior: n0 = 0).
  EXPECT_TRUE(RelNear(est.mean()(0), 4.0, 1e-14));
  EXPECT_TRUE(RelNear(est.Report().effective_n, 1.5, 1e-14));
}

TEST(NigRegressionTest, DiscountTracksAStepChange) {
  NigRegression<2>::Options o;
  o.discount.lambda = 0.97;
  NigRegression<2> est(o);
  std::mt19937_64 rng(10);
  std::normal_distribution<double> N(0, 1);
  for (int i = 0; i < 600; ++i) {
    const double slope = i < 300 ? 1.0 : 3.0;
    const double t = N(rng);
    const double x[2] = {1.0, t};
    Sample s;
    s.x = x;
    s.y = 0.5 + slope * t + 0.1 * N(rng);
    ASSERT_TRUE(est.Update(s).ok());
  }
  EXPECT_NEAR(est.mean()(1), 3.0, 0.05);
}

TEST(NigRegressionTest, RejectsBadInputAndChangesNothing) {
  NigRegression<2> est(NigRegression<2>::Options{});
  const Data d = MakeData(10, 2, 12);
  for (int i = 0; i < 10; ++i) ASSERT_TRUE(Feed(est, d, i).ok());
  const std::vector<double> before = Packed(est.state());
  const double good[2] = {1.0, 0.5}, bad_x[2] = {1.0, std::nan("")}, inf_x[2] = {INFINITY, 1.0};
  const double three[3] = {1.0, 2.0, 3.0};
  struct Case {
    Sample s;
    ErrorCode code;
  };
  std::vector<Case> cases;
  auto add = [&](auto edit, ErrorCode code) {
    Sample s;
    s.y = 1.0;
    s.x = good;
    edit(s);
    cases.push_back({s, code});
  };
  add([](Sample& s) { s.y = std::nan(""); }, ErrorCode::kNonFinite);
  add([](Sample& s) { s.y = INFINITY; }, ErrorCode::kNonFinite);
  add([&](Sample& s) { s.x = bad_x; }, ErrorCode::kNonFinite);
  add([&](Sample& s) { s.x = inf_x; }, ErrorCode::kNonFinite);
  add([&](Sample& s) { s.x = three; }, ErrorCode::kWrongRegressorCount);
  add([&](Sample& s) { s.x = std::span<const double>(); }, ErrorCode::kWrongRegressorCount);
  add([](Sample& s) { s.weight = 0.0; }, ErrorCode::kInvalidWeight);
  add([](Sample& s) { s.weight = -1.0; }, ErrorCode::kInvalidWeight);
  add([](Sample& s) { s.weight = std::nan(""); }, ErrorCode::kNonFinite);
  add([](Sample& s) { s.time = INFINITY; }, ErrorCode::kNonFinite);
  add(
      [](Sample& s) {
        s.y = 1e300;
        s.weight = 1e300;
      },
      ErrorCode::kNumericalFailure);
  for (const Case& c : cases) {
    Innovation inn;
    inn.prediction = 42.0;
    const Status st = est.Update(c.s, &inn);
    EXPECT_EQ(st.code(), c.code) << st.ToString();
    EXPECT_FALSE(st.message().empty());
    EXPECT_EQ(inn.prediction, 42.0);  // output untouched on rejection
    EXPECT_TRUE(SameBits(Packed(est.state()), before)) << st.ToString();
  }
}

TEST(NigRegressionTest, CaptureRestoreContinueIsBitIdentical) {
  const Data d = MakeData(60, 3, 13);
  NigRegression<3>::Options o;
  o.discount.half_life = 50.0;
  NigRegression<3> a(o);
  auto feed = [&](NigRegression<3>& e, int i, Innovation* inn) {
    std::vector<double> row = {d.X(i, 0), d.X(i, 1), d.X(i, 2)};
    Sample s;
    s.y = d.y(i);
    s.x = row;
    s.time = 3.0 * i;
    return e.Update(s, inn);
  };
  for (int i = 0; i < 30; ++i) ASSERT_TRUE(feed(a, i, nullptr).ok());
  const std::vector<double> packed = Packed(a.state());
  NigRegression<3>::State st;
  StateReader reader(packed);
  ASSERT_TRUE(st.Unpack(reader).ok());
  NigRegression<3> b(o);
  ASSERT_TRUE(b.Restore(st).ok());
  for (int i = 30; i < 60; ++i) {
    Innovation ia, ib;
    ASSERT_TRUE(feed(a, i, &ia).ok());
    ASSERT_TRUE(feed(b, i, &ib).ok());
    EXPECT_EQ(ia.log_predictive, ib.log_predictive);
    EXPECT_EQ(ia.standardized, ib.standardized);
  }
  EXPECT_TRUE(SameBits(Packed(a.state()), Packed(b.state())));
}

TEST(NigRegressionTest, RejectsTruncatedOrInconsistentState) {
  NigRegression<2> est(NigRegression<2>::Options{});
  const std::vector<double> before = Packed(est.state());
  std::vector<double> packed = before;
  packed.pop_back();
  NigRegression<2>::State st;
  StateReader short_reader(packed);
  EXPECT_EQ(st.Unpack(short_reader).code(), ErrorCode::kInvalidState);
  std::vector<double> longer = before;
  longer.push_back(0.0);
  StateReader long_reader(longer);
  EXPECT_EQ(st.Unpack(long_reader).code(), ErrorCode::kInvalidState);
  std::vector<double> wrong_p = before;
  wrong_p[0] = 3;
  StateReader p_reader(wrong_p);
  EXPECT_EQ(st.Unpack(p_reader).code(), ErrorCode::kInvalidState);

  NigRegression<2>::State lower = est.state();
  lower.factor(2, 0) = 1.0;
  EXPECT_EQ(est.Restore(lower).code(), ErrorCode::kInvalidState);
  NigRegression<2>::State negative = est.state();
  negative.factor(1, 1) = -1.0;
  EXPECT_EQ(est.Restore(negative).code(), ErrorCode::kInvalidState);
  NigRegression<2>::State nan_state = est.state();
  nan_state.a = std::nan("");
  EXPECT_EQ(est.Restore(nan_state).code(), ErrorCode::kInvalidState);
  NigRegression<2>::State bad_count = est.state();
  bad_count.count = -1;
  EXPECT_EQ(est.Restore(bad_count).code(), ErrorCode::kInvalidState);
  EXPECT_TRUE(SameBits(Packed(est.state()), before));

  // A dynamic-size estimator rejects a state of another size.
  NigRegression<>::Options o3;
  o3.p = 3;
  NigRegression<> dyn(o3);
  NigRegression<>::State st2;
  StateReader r2(before);
  ASSERT_TRUE(st2.Unpack(r2).ok());
  EXPECT_EQ(dyn.Restore(st2).code(), ErrorCode::kInvalidState);
}

TEST(NigRegressionTest, PredictionAgreesWithCoefficientMarginals) {
  const Data d = MakeData(30, 2, 14);
  NigRegression<2> est(NigRegression<2>::Options{});
  for (int i = 0; i < 30; ++i) ASSERT_TRUE(Feed(est, d, i).ok());
  const ParameterReport r = est.Report(0.9);
  // At x = e_j the fitted mean is beta_j: same mean and posterior sd as the coefficient report.
  const double e1[2] = {0.0, 1.0};
  const Prediction p = est.Predict(e1, 0.9);
  ASSERT_TRUE(p.valid);
  EXPECT_TRUE(RelNear(p.mean, r.value[1], 1e-14));
  EXPECT_TRUE(RelNear(p.mean_sd, r.std_error[1], 1e-12));
  // The new-observation interval is wider than the coefficient's credible interval.
  EXPECT_LT(p.lower, r.lower[1]);
  EXPECT_GT(p.upper, r.upper[1]);
  EXPECT_GT(p.sd, p.mean_sd);
  const double wrong[3] = {1, 2, 3};
  EXPECT_FALSE(est.Predict(wrong).valid);
  EXPECT_FALSE(est.Predict(e1, 1.5).valid);
}

TEST(NigRegressionTest, OptionsValidation) {
  NigRegression<2>::Options o;
  EXPECT_TRUE(o.Validate().ok());
  o.p = 3;
  EXPECT_EQ(o.Validate().code(), ErrorCode::kInvalidConfig);
  o = {};
  o.prior_precision = {1.0};
  EXPECT_EQ(o.Validate().code(), ErrorCode::kInvalidConfig);
  o = {};
  o.prior_precision = {1.0, 0.0};
  EXPECT_EQ(o.Validate().code(), ErrorCode::kInvalidConfig);
  o = {};
  o.a0 = 0;
  EXPECT_EQ(o.Validate().code(), ErrorCode::kInvalidConfig);
  o = {};
  o.b0 = std::nan("");
  EXPECT_EQ(o.Validate().code(), ErrorCode::kInvalidConfig);
  o = {};
  o.discount.lambda = 1.5;
  EXPECT_EQ(o.Validate().code(), ErrorCode::kInvalidConfig);
}

}  // namespace
}  // namespace bayline::est
