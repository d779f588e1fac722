// Beta-binomial, gamma-poisson and gamma-exponential posteriors.
#include <gtest/gtest.h>

#include <cmath>
#include <random>
#include <vector>

#include "estimators/map/beta_binomial.h"
#include "estimators/map/gamma_exponential.h"
#include "estimators/map/gamma_poisson.h"
#include "tests/unit/estimators/map/map_test_util.h"

namespace bayline::est {
namespace {

using testing::Packed;
using testing::RelNear;
using testing::SameBits;

double LogChoose(double n, double k) {
  return std::lgamma(n + 1) - std::lgamma(k + 1) - std::lgamma(n - k + 1);
}
double LogBeta(double a, double b) { return std::lgamma(a) + std::lgamma(b) - std::lgamma(a + b); }

TEST(BetaBinomialTest, MatchesBatchClosedFormAndMarginalLikelihood) {
  BetaBinomial::Options o;
  o.alpha0 = 2.0, o.beta0 = 3.0;
  BetaBinomial est(o);
  std::mt19937_64 rng(1);
  std::uniform_int_distribution<int> trials(1, 20);
  double sy = 0, sf = 0, log_choose = 0, sum_log_pred = 0;
  for (int i = 0; i < 200; ++i) {
    const int n = trials(rng);
    std::binomial_distribution<int> B(n, 0.3);
    Sample s;
    s.trials = n;
    s.y = B(rng);
    Innovation inn;
    ASSERT_TRUE(est.Update(s, &inn).ok());
    sum_log_pred += inn.log_predictive;
    sy += s.y, sf += n - s.y, log_choose += LogChoose(n, s.y);
  }
  // Closed form: Beta(alpha0 + sum y, beta0 + sum (n - y)); log marginal likelihood
  // sum log C(n_i, y_i) + log B(alpha_n, beta_n) - log B(alpha0, beta0) (any Bayesian text).
  const double an = 2.0 + sy, bn = 3.0 + sf;
  EXPECT_DOUBLE_EQ(est.state().alpha, an);
  EXPECT_DOUBLE_EQ(est.state().beta, bn);
  const double log_ml = log_choose + LogBeta(an, bn) - LogBeta(2.0, 3.0);
  const ParameterReport r = est.Report();
  EXPECT_TRUE(RelNear(r.log_likelihood, log_ml, 1e-11));
  EXPECT_TRUE(RelNear(sum_log_pred, log_ml, 1e-11));
  EXPECT_TRUE(RelNear(r.value[0], (an - 1) / (an + bn - 2), 1e-15));
  EXPECT_TRUE(RelNear(r.posterior_mean[0], an / (an + bn), 1e-15));
  EXPECT_TRUE(
      RelNear(r.std_error[0], std::sqrt(an * bn / ((an + bn) * (an + bn) * (an + bn + 1))), 1e-14));
  EXPECT_LT(r.lower[0], r.value[0]);
  EXPECT_GT(r.upper[0], r.value[0]);
}

TEST(BetaBinomialTest, ModeAtBoundariesAndUniformPrior) {
  BetaBinomial est(BetaBinomial::Options{});  // Beta(1, 1)
  EXPECT_DOUBLE_EQ(est.Report().value[0], 0.5);
  Sample s;
  s.y = 0;
  s.trials = 4;
  ASSERT_TRUE(est.Update(s).ok());  // Beta(1, 5): density decreasing, mode 0
  EXPECT_DOUBLE_EQ(est.Report().value[0], 0.0);
  s.y = 10;
  s.trials = 10;
  BetaBinomial est2(BetaBinomial::Options{});
  ASSERT_TRUE(est2.Update(s).ok());  // Beta(11, 1): mode 1
  EXPECT_DOUBLE_EQ(est2.Report().value[0], 1.0);
}

TEST(BetaBinomialTest, RejectsOutOfDomainCountsAndChangesNothing) {
  BetaBinomial est(BetaBinomial::Options{});
  Sample ok;
  ok.y = 2, ok.trials = 5;
  ASSERT_TRUE(est.Update(ok).ok());
  const std::vector<double> before = Packed(est.state());
  auto expect = [&](double y, double n, double w, ErrorCode code) {
    Sample s;
    s.y = y, s.trials = n, s.weight = w;
    const Status st = est.Update(s);
    EXPECT_EQ(st.code(), code) << y << " " << n << " " << st.ToString();
    EXPECT_TRUE(SameBits(Packed(est.state()), before));
  };
  expect(-1, 5, 1, ErrorCode::kOutOfDomain);
  expect(6, 5, 1, ErrorCode::kOutOfDomain);
  expect(1.5, 5, 1, ErrorCode::kOutOfDomain);
  expect(1, 2.5, 1, ErrorCode::kOutOfDomain);
  expect(0, 0, 1, ErrorCode::kOutOfDomain);
  expect(0, -3, 1, ErrorCode::kOutOfDomain);
  expect(std::nan(""), 5, 1, ErrorCode::kNonFinite);
  expect(1, INFINITY, 1, ErrorCode::kNonFinite);
  expect(1, 5, 0, ErrorCode::kInvalidWeight);
  expect(1, 5, -1, ErrorCode::kInvalidWeight);
}

TEST(BetaBinomialTest, DiscountOneIsExactAndDiscountMixesTowardThePrior) {
  BetaBinomial::Options o;
  o.alpha0 = 1.5, o.beta0 = 2.5;
  BetaBinomial exact(o);
  o.discount.lambda = 1.0;
  BetaBinomial one(o);
  o.discount.lambda = 0.8;
  BetaBinomial disc(o);
  double al = 1.5, be = 2.5;
  for (int i = 0; i < 30; ++i) {
    Sample s;
    s.trials = 3 + i % 4;
    s.y = i % 3;
    ASSERT_TRUE(exact.Update(s).ok());
    ASSERT_TRUE(one.Update(s).ok());
    ASSERT_TRUE(disc.Update(s).ok());
    al = 0.8 * al + 0.2 * 1.5 + s.y;  // n_t = delta n_{t-1} + (1 - delta) n_0 + s_t
    be = 0.8 * be + 0.2 * 2.5 + (s.trials - s.y);
  }
  EXPECT_TRUE(SameBits(Packed(exact.state()), Packed(one.state())));
  EXPECT_TRUE(RelNear(disc.state().alpha, al, 1e-14));
  EXPECT_TRUE(RelNear(disc.state().beta, be, 1e-14));
}

TEST(GammaPoissonTest, MatchesBatchClosedFormAndMarginalLikelihood) {
  GammaPoisson::Options o;
  o.a0 = 2.0, o.b0 = 0.5;
  GammaPoisson est(o);
  std::mt19937_64 rng(2);
  std::uniform_real_distribution<double> expo(0.5, 3.0);
  double sy = 0, se = 0, sum_log_pred = 0, log_ml_terms = 0;
  for (int i = 0; i < 200; ++i) {
    const double e = expo(rng);
    std::poisson_distribution<int> Pd(4.0 * e);
    Sample s;
    s.exposure = e;
    s.y = Pd(rng);
    Innovation inn;
    ASSERT_TRUE(est.Update(s, &inn).ok());
    sum_log_pred += inn.log_predictive;
    sy += s.y, se += e;
    log_ml_terms += s.y * std::log(e) - std::lgamma(s.y + 1);
  }
  // Closed form: Gamma(a0 + sum y, b0 + sum e); log marginal likelihood
  // sum (y log e - log y!) + a0 log b0 - lgamma(a0) + lgamma(a_n) - a_n log b_n (any Bayesian
  // text).
  const double an = 2.0 + sy, bn = 0.5 + se;
  EXPECT_DOUBLE_EQ(est.state().a, an);
  EXPECT_TRUE(RelNear(est.state().b, bn, 1e-14));
  const double log_ml =
      log_ml_terms + 2.0 * std::log(0.5) - std::lgamma(2.0) + std::lgamma(an) - an * std::log(bn);
  EXPECT_TRUE(RelNear(est.Report().log_likelihood, log_ml, 1e-11));
  EXPECT_TRUE(RelNear(sum_log_pred, log_ml, 1e-11));
  const ParameterReport r = est.Report();
  EXPECT_TRUE(RelNear(r.value[0], (an - 1) / bn, 1e-14));
  EXPECT_TRUE(RelNear(r.std_error[0], std::sqrt(an) / bn, 1e-14));
}

TEST(GammaPoissonTest, RejectsOutOfDomainAndChangesNothing) {
  GammaPoisson est(GammaPoisson::Options{});
  Sample ok;
  ok.y = 3;
  ASSERT_TRUE(est.Update(ok).ok());
  const std::vector<double> before = Packed(est.state());
  auto expect = [&](double y, double e, double w, ErrorCode code) {
    Sample s;
    s.y = y, s.exposure = e, s.weight = w;
    const Status st = est.Update(s);
    EXPECT_EQ(st.code(), code) << st.ToString();
    EXPECT_TRUE(SameBits(Packed(est.state()), before));
  };
  expect(-1, 1, 1, ErrorCode::kOutOfDomain);
  expect(2.5, 1, 1, ErrorCode::kOutOfDomain);
  expect(2, 0, 1, ErrorCode::kOutOfDomain);
  expect(2, -1, 1, ErrorCode::kOutOfDomain);
  expect(2, std::nan(""), 1, ErrorCode::kNonFinite);
  expect(INFINITY, 1, 1, ErrorCode::kNonFinite);
  expect(2, 1, 0, ErrorCode::kInvalidWeight);
}

TEST(GammaExponentialTest, MatchesBatchClosedFormAndMarginalLikelihood) {
  GammaExponential::Options o;
  o.a0 = 3.0, o.b0 = 2.0;
  GammaExponential est(o);
  std::mt19937_64 rng(3);
  std::exponential_distribution<double> E(1.7);
  double sy = 0, sum_log_pred = 0;
  const int n = 150;
  for (int i = 0; i < n; ++i) {
    Sample s;
    s.y = E(rng);
    Innovation inn;
    ASSERT_TRUE(est.Update(s, &inn).ok());
    sum_log_pred += inn.log_predictive;
    sy += s.y;
  }
  // Closed form: Gamma(a0 + n, b0 + sum y); log marginal likelihood
  // a0 log b0 - lgamma(a0) + lgamma(a_n) - a_n log b_n (any Bayesian text).
  const double an = 3.0 + n, bn = 2.0 + sy;
  EXPECT_DOUBLE_EQ(est.state().a, an);
  EXPECT_TRUE(RelNear(est.state().b, bn, 1e-13));
  const double log_ml =
      3.0 * std::log(2.0) - std::lgamma(3.0) + std::lgamma(an) - an * std::log(bn);
  EXPECT_TRUE(RelNear(est.Report().log_likelihood, log_ml, 1e-11));
  EXPECT_TRUE(RelNear(sum_log_pred, log_ml, 1e-11));
}

TEST(GammaExponentialTest, NormalScoreIsStandardNormalUnderTheModel) {
  // Rates drawn from the prior, data from the rate: the one-step normal scores are N(0, 1) by the
  // probability integral transform (common practice, no source). Check mean, variance, and the
  // share beyond 1.96 loosely (4 standard errors).
  GammaExponential::Options o;
  o.a0 = 2.0, o.b0 = 1.0;
  std::mt19937_64 rng(4);
  double s1 = 0, s2 = 0, tail = 0;
  int m = 0;
  for (int rep = 0; rep < 2000; ++rep) {
    std::gamma_distribution<double> G(2.0, 1.0);
    std::exponential_distribution<double> E(G(rng));
    GammaExponential est(o);
    for (int i = 0; i < 10; ++i) {
      Sample s;
      s.y = E(rng);
      Innovation inn;
      ASSERT_TRUE(est.Update(s, &inn).ok());
      s1 += inn.standardized, s2 += inn.standardized * inn.standardized;
      tail += std::fabs(inn.standardized) > 1.959963984540054;  // z_0.975, from memory
      ++m;
    }
  }
  EXPECT_NEAR(s1 / m, 0.0, 4 / std::sqrt(m));
  EXPECT_NEAR(s2 / m, 1.0, 4 * std::sqrt(2.0 / m));
  EXPECT_NEAR(tail / m, 0.05, 4 * std::sqrt(0.05 * 0.95 / m));
}

TEST(GammaExponentialTest, RejectsOutOfDomainAndChangesNothing) {
  GammaExponential est(GammaExponential::Options{});
  Sample ok;
  ok.y = 0.3;
  ASSERT_TRUE(est.Update(ok).ok());
  const std::vector<double> before = Packed(est.state());
  for (double y : {0.0, -1.0}) {
    Sample s;
    s.y = y;
    EXPECT_EQ(est.Update(s).code(), ErrorCode::kOutOfDomain);
  }
  Sample s;
  s.y = std::nan("");
  EXPECT_EQ(est.Update(s).code(), ErrorCode::kNonFinite);
  s.y = 1.0;
  s.weight = 0;
  EXPECT_EQ(est.Update(s).code(), ErrorCode::kInvalidWeight);
  EXPECT_TRUE(SameBits(Packed(est.state()), before));
}

TEST(ScalarPosteriorsTest, CaptureRestoreContinueIsBitIdenticalAndBadStatesRejected) {
  GammaPoisson::Options po;
  po.discount.half_life = 5.0;
  GammaPoisson a(po), b(po);
  GammaExponential::Options eo;
  eo.discount.lambda = 0.9;
  GammaExponential ea(eo), eb(eo);
  BetaBinomial::Options bo;
  bo.discount.lambda = 0.95;
  BetaBinomial ba(bo), bb(bo);
  auto sample = [](int i) {
    Sample s;
    s.y = i % 5;
    s.trials = 6;
    s.exposure = 1.0 + 0.1 * i;
    s.time = 2.0 * i;
    return s;
  };
  for (int i = 0; i < 10; ++i) {
    ASSERT_TRUE(a.Update(sample(i)).ok());
    Sample s = sample(i);
    s.y += 0.5;
    ASSERT_TRUE(ea.Update(s).ok());
    ASSERT_TRUE(ba.Update(sample(i)).ok());
  }
  auto roundtrip = [](const auto& from, auto& to) {
    using St = std::remove_cvref_t<decltype(from.state())>;
    const std::vector<double> packed = Packed(from.state());
    St st;
    StateReader r(packed);
    ASSERT_TRUE(st.Unpack(r).ok());
    ASSERT_TRUE(to.Restore(st).ok());
    std::vector<double> cut(packed.begin(), packed.end() - 2);
    StateReader rc(cut);
    EXPECT_EQ(st.Unpack(rc).code(), ErrorCode::kInvalidState);
  };
  roundtrip(a, b);
  roundtrip(ea, eb);
  roundtrip(ba, bb);
  for (int i = 10; i < 20; ++i) {
    Innovation x, y;
    ASSERT_TRUE(a.Update(sample(i), &x).ok());
    ASSERT_TRUE(b.Update(sample(i), &y).ok());
    EXPECT_EQ(x.log_predictive, y.log_predictive);
    Sample s = sample(i);
    s.y += 0.5;
    ASSERT_TRUE(ea.Update(s).ok());
    ASSERT_TRUE(eb.Update(s).ok());
    ASSERT_TRUE(ba.Update(sample(i)).ok());
    ASSERT_TRUE(bb.Update(sample(i)).ok());
  }
  EXPECT_TRUE(SameBits(Packed(a.state()), Packed(b.state())));
  EXPECT_TRUE(SameBits(Packed(ea.state()), Packed(eb.state())));
  EXPECT_TRUE(SameBits(Packed(ba.state()), Packed(bb.state())));

  GammaPoisson::State bad = a.state();
  bad.b = 0;
  EXPECT_EQ(a.Restore(bad).code(), ErrorCode::kInvalidState);
  GammaExponential::State bad_e = ea.state();
  bad_e.a = -1;
  EXPECT_EQ(ea.Restore(bad_e).code(), ErrorCode::kInvalidState);
  BetaBinomial::State bad_b = ba.state();
  bad_b.effective_n = std::nan("");
  EXPECT_EQ(ba.Restore(bad_b).code(), ErrorCode::kInvalidState);
  EXPECT_TRUE(SameBits(Packed(a.state()), Packed(b.state())));
}

TEST(ScalarPosteriorsTest, OptionsValidation) {
  BetaBinomial::Options b;
  b.alpha0 = 0;
  EXPECT_EQ(b.Validate().code(), ErrorCode::kInvalidConfig);
  GammaPoisson::Options p;
  p.b0 = -1;
  EXPECT_EQ(p.Validate().code(), ErrorCode::kInvalidConfig);
  GammaExponential::Options e;
  e.discount.half_life = -1;
  EXPECT_EQ(e.Validate().code(), ErrorCode::kInvalidConfig);
  EXPECT_TRUE(BetaBinomial::Options{}.Validate().ok());
}

}  // namespace
}  // namespace bayline::est
