#include "estimators/map/normal_gamma.h"

#include <gtest/gtest.h>

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

std::vector<double> Draws(int n, double mean, double sd, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> N(mean, sd);
  std::vector<double> y(n);
  for (double& v : y) v = N(rng);
  return y;
}

TEST(NormalGammaTest, MatchesBatchClosedFormAndMarginalLikelihood) {
  NormalGamma::Options o;
  o.m0 = 1.0, o.kappa0 = 0.5, o.a0 = 2.0, o.b0 = 3.0;
  NormalGamma est(o);
  const std::vector<double> y = Draws(100, 4.0, 2.0, 1);
  double sum_log_pred = 0;
  for (double v : y) {
    Sample s;
    s.y = v;
    Innovation inn;
    ASSERT_TRUE(est.Update(s, &inn).ok());
    sum_log_pred += inn.log_predictive;
  }
  // Closed form (any Bayesian text on the normal-gamma model):
  // kappa_n = kappa0 + n, m_n = (kappa0 m0 + n ybar) / kappa_n, a_n = a0 + n/2,
  // b_n = b0 + SS/2 + kappa0 n (ybar - m0)^2 / (2 kappa_n),
  // log p(y) = lgamma(a_n) - lgamma(a0) + a0 log b0 - a_n log b_n + 1/2 log(kappa0/kappa_n)
  //            - n/2 log(2 pi).
  const double n = y.size();
  double ybar = 0;
  for (double v : y) ybar += v / n;
  double ss = 0;
  for (double v : y) ss += (v - ybar) * (v - ybar);
  const double kn = 0.5 + n, mn = (0.5 * 1.0 + n * ybar) / kn, an = 2.0 + n / 2;
  const double bn = 3.0 + ss / 2 + 0.5 * n * (ybar - 1.0) * (ybar - 1.0) / (2 * kn);
  const double log_ml = std::lgamma(an) - std::lgamma(2.0) + 2.0 * std::log(3.0) -
                        an * std::log(bn) + 0.5 * std::log(0.5 / kn) -
                        n / 2 * std::log(2 * std::numbers::pi);
  EXPECT_TRUE(RelNear(est.state().m, mn, 1e-13));
  EXPECT_TRUE(RelNear(est.state().kappa, kn, 1e-15));
  EXPECT_TRUE(RelNear(est.state().b, bn, 1e-12));
  EXPECT_TRUE(RelNear(est.Report().log_likelihood, log_ml, 1e-11));
  EXPECT_TRUE(RelNear(sum_log_pred, log_ml, 1e-11));
  const ParameterReport r = est.Report();
  ASSERT_TRUE(r.identifiable);
  EXPECT_TRUE(RelNear(r.value[1], bn / (an + 1.5), 1e-12));         // joint mode of sigma^2
  EXPECT_TRUE(RelNear(r.posterior_mean[1], bn / (an - 1), 1e-12));  // inverse-gamma mean
  EXPECT_TRUE(RelNear(r.std_error[0], std::sqrt(bn / ((an - 1) * kn)), 1e-12));
  EXPECT_LT(r.lower[1], r.value[1]);
  EXPECT_GT(r.upper[1], r.posterior_mean[1]);
}

TEST(NormalGammaTest, AgreesWithRegressionOnAnInterceptColumn) {
  // Two implementations of the same posterior: the scalar normal-gamma and the square-root NIG
  // regression with x = [1] (and precision weights).
  NormalGamma::Options o;
  o.m0 = -1.0, o.kappa0 = 0.2, o.a0 = 1.5, o.b0 = 0.7;
  NormalGamma ng(o);
  NigRegression<1>::Options ro;
  ro.prior_mean = {-1.0};
  ro.prior_precision = {0.2};
  ro.a0 = 1.5, ro.b0 = 0.7;
  NigRegression<1> reg(ro);
  const std::vector<double> y = Draws(50, 0.3, 1.2, 2);
  const double one[1] = {1.0};
  for (std::size_t i = 0; i < y.size(); ++i) {
    Sample s;
    s.y = y[i];
    s.weight = 0.5 + (i % 3);
    Innovation a, b;
    ASSERT_TRUE(ng.Update(s, &a).ok());
    s.x = one;
    ASSERT_TRUE(reg.Update(s, &b).ok());
    EXPECT_TRUE(RelNear(a.log_predictive, b.log_predictive, 1e-11));
    EXPECT_TRUE(RelNear(a.standardized, b.standardized, 1e-9, 1e-6));
  }
  const ParameterReport a = ng.Report(0.9), b = reg.Report(0.9);
  EXPECT_TRUE(RelNear(a.value[0], b.value[0], 1e-12));
  EXPECT_TRUE(RelNear(a.lower[0], b.lower[0], 1e-12));
  EXPECT_TRUE(RelNear(a.std_error[0], b.std_error[0], 1e-12));
  EXPECT_TRUE(RelNear(a.log_likelihood, b.log_likelihood, 1e-11));
}

TEST(NormalGammaTest, FlatPriorGivesSampleMeanAndVariance) {
  NormalGamma::Options o;
  o.flat_prior = true;
  NormalGamma est(o);
  const std::vector<double> y = Draws(30, 10.0, 3.0, 3);
  int valid = 0;
  for (double v : y) {
    Sample s;
    s.y = v;
    Innovation inn;
    ASSERT_TRUE(est.Update(s, &inn).ok());
    valid += inn.valid;
  }
  EXPECT_EQ(valid, 28);  // the first two observations have no proper predictive
  double mean = 0;
  for (double v : y) mean += v / y.size();
  double ss = 0;
  for (double v : y) ss += (v - mean) * (v - mean);
  // Flat prior: posterior mean of mu = sample mean, sigma^2 | D ~ InvGamma((n-1)/2, SS/2):
  // common practice, no source.
  EXPECT_TRUE(RelNear(est.state().m, mean, 1e-13));
  EXPECT_TRUE(RelNear(2 * est.state().b, ss, 1e-12));
  EXPECT_DOUBLE_EQ(est.state().a, 0.5 * (30 - 1));
}

TEST(NormalGammaTest, DiscountOneIsExactAndDiscountMatchesWeightedClosedForm) {
  const std::vector<double> y = Draws(80, 2.0, 0.5, 4);
  NormalGamma::Options o;
  o.m0 = 0.5, o.kappa0 = 0.3, o.a0 = 1.0, o.b0 = 1.0;
  NormalGamma exact(o);
  o.discount.lambda = 1.0;
  NormalGamma one(o);
  const double delta = 0.9;
  o.discount.lambda = delta;
  NormalGamma disc(o);
  for (double v : y) {
    Sample s;
    s.y = v;
    ASSERT_TRUE(exact.Update(s).ok());
    ASSERT_TRUE(one.Update(s).ok());
    ASSERT_TRUE(disc.Update(s).ok());
  }
  EXPECT_TRUE(SameBits(Packed(exact.state()), Packed(one.state())));
  // n_t = n_0 + sum delta^(t-i) s_i on the natural parameters (kappa, kappa m, kappa m^2 + 2b, a).
  double k = 0.3, km = 0.3 * 0.5, s2 = 0.3 * 0.25 + 2.0, a = 1.0;
  for (std::size_t i = 0; i < y.size(); ++i) {
    const double f = std::pow(delta, double(y.size() - 1 - i));
    k += f, km += f * y[i], s2 += f * y[i] * y[i], a += 0.5 * f;
  }
  const double m = km / k, b = 0.5 * (s2 - k * m * m);
  EXPECT_TRUE(RelNear(disc.state().m, m, 1e-12));
  EXPECT_TRUE(RelNear(disc.state().kappa, k, 1e-12));
  EXPECT_TRUE(RelNear(disc.state().a, a, 1e-12));
  EXPECT_TRUE(RelNear(disc.state().b, b, 1e-10));
}

TEST(NormalGammaTest, HalfLifeDiscountIgnoresLateSamplesForTheClock) {
  // Half-life 10 s, flat prior (n0 = 0). Times 0, 10, 5 (late), 20: the late sample neither decays
  // the past nor moves the clock back, so the final weights are 0.25, 0.5, 0.5, 1.
  NormalGamma::Options o;
  o.flat_prior = true;
  o.discount.half_life = 10.0;
  NormalGamma est(o);
  const double times[4] = {0, 10, 5, 20}, ys[4] = {1, 2, 3, 4};
  for (int i = 0; i < 4; ++i) {
    Sample s;
    s.y = ys[i];
    s.time = times[i];
    ASSERT_TRUE(est.Update(s).ok());
  }
  EXPECT_TRUE(RelNear(est.state().m, (0.25 * 1 + 0.5 * 2 + 0.5 * 3 + 4) / 2.25, 1e-14));
  EXPECT_TRUE(RelNear(est.state().effective_n, 2.25, 1e-14));
  EXPECT_EQ(est.state().last_time, 20.0);
}

TEST(NormalGammaTest, LargeOffsetDataKeepPrecision) {
  // NIST StRD NumAcc4 by construction (tests/reference/data/nist-strd README, REFERENCES.md):
  // 10000000.2 then 500 pairs of 10000000.1, 10000000.3: mean 10000000.2, sd 0.1. The decimal data
  // are off by up to half an ulp (~1e-9) each, which bounds the attainable agreement.
  NormalGamma::Options o;
  o.flat_prior = true;
  NormalGamma est(o);
  Sample s;
  s.y = 10000000.2;
  ASSERT_TRUE(est.Update(s).ok());
  for (int i = 0; i < 500; ++i) {
    s.y = 10000000.1;
    ASSERT_TRUE(est.Update(s).ok());
    s.y = 10000000.3;
    ASSERT_TRUE(est.Update(s).ok());
  }
  EXPECT_TRUE(RelNear(est.state().m, 10000000.2, 1e-14));
  const double sample_var = 2 * est.state().b / (1001 - 1);
  EXPECT_TRUE(RelNear(std::sqrt(sample_var), 0.1, 1e-7));
}

TEST(NormalGammaTest, RejectsBadInputAndChangesNothing) {
  NormalGamma est(NormalGamma::Options{});
  Sample s;
  s.y = 1.0;
  ASSERT_TRUE(est.Update(s).ok());
  const std::vector<double> before = Packed(est.state());
  const double x[1] = {1.0};
  std::vector<std::pair<Sample, ErrorCode>> cases;
  Sample b = s;
  b.y = std::nan("");
  cases.push_back({b, ErrorCode::kNonFinite});
  b = s;
  b.y = -INFINITY;
  cases.push_back({b, ErrorCode::kNonFinite});
  b = s;
  b.x = x;
  cases.push_back({b, ErrorCode::kWrongRegressorCount});
  b = s;
  b.weight = 0;
  cases.push_back({b, ErrorCode::kInvalidWeight});
  b = s;
  b.weight = -2;
  cases.push_back({b, ErrorCode::kInvalidWeight});
  b = s;
  b.y = 1e300;
  b.weight = 1e300;
  cases.push_back({b, ErrorCode::kNumericalFailure});
  for (const auto& [sample, code] : cases) {
    const Status st = est.Update(sample);
    EXPECT_EQ(st.code(), code) << st.ToString();
    EXPECT_TRUE(SameBits(Packed(est.state()), before));
  }
}

TEST(NormalGammaTest, CaptureRestoreContinueIsBitIdenticalAndBadStatesRejected) {
  NormalGamma::Options o;
  o.discount.lambda = 0.99;
  NormalGamma a(o);
  const std::vector<double> y = Draws(40, 1.0, 1.0, 5);
  for (int i = 0; i < 20; ++i) {
    Sample s;
    s.y = y[i];
    ASSERT_TRUE(a.Update(s).ok());
  }
  const std::vector<double> packed = Packed(a.state());
  NormalGamma::State st;
  StateReader r(packed);
  ASSERT_TRUE(st.Unpack(r).ok());
  NormalGamma b(o);
  ASSERT_TRUE(b.Restore(st).ok());
  for (int i = 20; i < 40; ++i) {
    Sample s;
    s.y = y[i];
    Innovation ia, ib;
    ASSERT_TRUE(a.Update(s, &ia).ok());
    ASSERT_TRUE(b.Update(s, &ib).ok());
    EXPECT_EQ(ia.log_predictive, ib.log_predictive);
  }
  EXPECT_TRUE(SameBits(Packed(a.state()), Packed(b.state())));

  std::vector<double> truncated(packed.begin(), packed.end() - 1);
  StateReader rt(truncated);
  EXPECT_EQ(st.Unpack(rt).code(), ErrorCode::kInvalidState);
  NormalGamma::State bad = a.state();
  bad.b = -1;
  EXPECT_EQ(a.Restore(bad).code(), ErrorCode::kInvalidState);
  bad = a.state();
  bad.kappa = std::nan("");
  EXPECT_EQ(a.Restore(bad).code(), ErrorCode::kInvalidState);
  bad = a.state();
  bad.count = 1.5;
  EXPECT_EQ(a.Restore(bad).code(), ErrorCode::kInvalidState);
  EXPECT_TRUE(SameBits(Packed(a.state()), Packed(b.state())));
}

}  // namespace
}  // namespace bayline::est
