// Coverage by simulation: parameters drawn from the prior, data drawn given them. Averaged over the
// prior, an equal-tailed 95% credible interval contains the true parameter with probability exactly
// 0.95 (the definition of the posterior; common practice, no source). Each check uses 20,000
// replicates: the binomial standard error of the share is 0.0015, so the accepted band
// 0.95 +/- 0.01 is about 6.5 standard errors wide.
#include <gtest/gtest.h>

#include <Eigen/Dense>
#include <cmath>
#include <cstdio>
#include <random>
#include <vector>

#include "estimators/map/beta_binomial.h"
#include "estimators/map/dynamic_linear_model.h"
#include "estimators/map/gamma_exponential.h"
#include "estimators/map/gamma_poisson.h"
#include "estimators/map/nig_regression.h"
#include "estimators/map/normal_gamma.h"

namespace bayline::est {
namespace {

constexpr int kReplicates = 20000;
constexpr double kLevel = 0.95;
constexpr double kBand = 0.01;

void Print(const char* what, int covered) {
  std::printf("coverage %s: %.4f\n", what, covered / double(kReplicates));
}

bool Covers(const ParameterReport& r, std::size_t j, double truth) {
  return r.lower[j] <= truth && truth <= r.upper[j];
}

double DrawGamma(std::mt19937_64& rng, double shape, double rate) {
  return std::gamma_distribution<double>(shape, 1.0 / rate)(rng);
}

TEST(CoverageTest, NormalGammaMeanAndVariance) {
  NormalGamma::Options o;
  o.m0 = 1.0, o.kappa0 = 0.5, o.a0 = 3.0, o.b0 = 2.0;
  std::mt19937_64 rng(101);
  std::normal_distribution<double> N(0, 1);
  int cover_mean = 0, cover_var = 0;
  for (int rep = 0; rep < kReplicates; ++rep) {
    const double var = 1.0 / DrawGamma(rng, o.a0, o.b0);
    const double mu = o.m0 + std::sqrt(var / o.kappa0) * N(rng);
    NormalGamma est(o);
    for (int i = 0; i < 6; ++i) {
      Sample s;
      s.y = mu + std::sqrt(var) * N(rng);
      ASSERT_TRUE(est.Update(s).ok());
    }
    const ParameterReport r = est.Report(kLevel);
    cover_mean += Covers(r, 0, mu);
    cover_var += Covers(r, 1, var);
  }
  Print("normal-gamma mean", cover_mean);
  Print("normal-gamma variance", cover_var);
  EXPECT_NEAR(cover_mean / double(kReplicates), kLevel, kBand);
  EXPECT_NEAR(cover_var / double(kReplicates), kLevel, kBand);
}

TEST(CoverageTest, BetaBinomialProbability) {
  BetaBinomial::Options o;
  o.alpha0 = 2.0, o.beta0 = 3.0;
  std::mt19937_64 rng(102);
  int cover = 0;
  for (int rep = 0; rep < kReplicates; ++rep) {
    const double g1 = DrawGamma(rng, o.alpha0, 1.0), g2 = DrawGamma(rng, o.beta0, 1.0);
    const double q = g1 / (g1 + g2);
    BetaBinomial est(o);
    std::binomial_distribution<int> B(10, q);
    for (int i = 0; i < 4; ++i) {
      Sample s;
      s.trials = 10;
      s.y = B(rng);
      ASSERT_TRUE(est.Update(s).ok());
    }
    cover += Covers(est.Report(kLevel), 0, q);
  }
  Print("beta-binomial probability", cover);
  EXPECT_NEAR(cover / double(kReplicates), kLevel, kBand);
}

TEST(CoverageTest, GammaPoissonRate) {
  GammaPoisson::Options o;
  o.a0 = 3.0, o.b0 = 1.0;
  std::mt19937_64 rng(103);
  int cover = 0;
  for (int rep = 0; rep < kReplicates; ++rep) {
    const double rate = DrawGamma(rng, o.a0, o.b0);
    GammaPoisson est(o);
    for (int i = 0; i < 5; ++i) {
      Sample s;
      s.exposure = 0.5 + 0.25 * i;
      s.y = std::poisson_distribution<int>(rate * s.exposure)(rng);
      ASSERT_TRUE(est.Update(s).ok());
    }
    cover += Covers(est.Report(kLevel), 0, rate);
  }
  Print("gamma-poisson rate", cover);
  EXPECT_NEAR(cover / double(kReplicates), kLevel, kBand);
}

TEST(CoverageTest, GammaExponentialRate) {
  GammaExponential::Options o;
  o.a0 = 2.0, o.b0 = 3.0;
  std::mt19937_64 rng(104);
  int cover = 0;
  for (int rep = 0; rep < kReplicates; ++rep) {
    const double rate = DrawGamma(rng, o.a0, o.b0);
    GammaExponential est(o);
    std::exponential_distribution<double> E(rate);
    for (int i = 0; i < 5; ++i) {
      Sample s;
      s.y = E(rng);
      ASSERT_TRUE(est.Update(s).ok());
    }
    cover += Covers(est.Report(kLevel), 0, rate);
  }
  Print("gamma-exponential rate", cover);
  EXPECT_NEAR(cover / double(kReplicates), kLevel, kBand);
}

TEST(CoverageTest, NigRegressionCoefficients) {
  NigRegression<3>::Options o;
  o.prior_mean = {0.5, -1.0, 2.0};
  o.prior_precision = {0.5, 1.0, 2.0};
  o.a0 = 3.0, o.b0 = 2.0;
  std::mt19937_64 rng(105);
  std::normal_distribution<double> N(0, 1);
  int cover[3] = {0, 0, 0};
  for (int rep = 0; rep < kReplicates; ++rep) {
    const double var = 1.0 / DrawGamma(rng, o.a0, o.b0);
    double beta[3];
    for (int j = 0; j < 3; ++j) {
      beta[j] = o.prior_mean[j] + std::sqrt(var / o.prior_precision[j]) * N(rng);
    }
    NigRegression<3> est(o);
    for (int i = 0; i < 6; ++i) {
      const double x[3] = {1.0, N(rng), N(rng)};
      Sample s;
      s.x = x;
      s.y = beta[0] + beta[1] * x[1] + beta[2] * x[2] + std::sqrt(var) * N(rng);
      ASSERT_TRUE(est.Update(s).ok());
    }
    const ParameterReport r = est.Report(kLevel);
    for (int j = 0; j < 3; ++j) cover[j] += Covers(r, j, beta[j]);
  }
  Print("nig beta0", cover[0]);
  Print("nig beta1", cover[1]);
  Print("nig beta2", cover[2]);
  for (int j = 0; j < 3; ++j) EXPECT_NEAR(cover[j] / double(kReplicates), kLevel, kBand) << j;
}

TEST(CoverageTest, DynamicLinearModelFilteredState) {
  DynamicLinearModel<2>::Options o;
  o.obs_variance = 0.5;
  o.state_variance = {0.05, 0.02};
  o.diffuse = false;
  o.initial_mean = {1.0, -1.0};
  o.initial_variance = {2.0, 1.0};
  std::mt19937_64 rng(106);
  std::normal_distribution<double> N(0, 1);
  int cover[2] = {0, 0};
  for (int rep = 0; rep < kReplicates; ++rep) {
    double beta[2] = {1.0 + std::sqrt(2.0) * N(rng), -1.0 + N(rng)};
    DynamicLinearModel<2> f(o);
    for (int t = 0; t < 8; ++t) {
      if (t > 0) {
        beta[0] += std::sqrt(0.05) * N(rng);
        beta[1] += std::sqrt(0.02) * N(rng);
      }
      const double x[2] = {1.0, N(rng)};
      Sample s;
      s.x = x;
      s.y = beta[0] + beta[1] * x[1] + std::sqrt(0.5) * N(rng);
      ASSERT_TRUE(f.Update(s).ok());
    }
    const ParameterReport r = f.Report(kLevel);
    for (int j = 0; j < 2; ++j) cover[j] += Covers(r, j, beta[j]);
  }
  Print("dlm beta0", cover[0]);
  Print("dlm beta1", cover[1]);
  for (int j = 0; j < 2; ++j) EXPECT_NEAR(cover[j] / double(kReplicates), kLevel, kBand) << j;
}

TEST(CoverageTest, DynamicLinearModelLearnedVariance) {
  // V ~ InvGamma(3, 2); beta_1 | V ~ N(m1, V C1*); drift V W*; data given them.
  DynamicLinearModel<2>::Options o;
  o.learn_obs_variance = true;
  o.obs_variance_shape = 3.0;
  o.obs_variance_scale = 2.0;
  o.state_variance = {0.1, 0.05};
  o.diffuse = false;
  o.initial_mean = {0.0, 1.0};
  o.initial_variance = {1.0, 0.5};
  std::mt19937_64 rng(107);
  std::normal_distribution<double> N(0, 1);
  int cover[2] = {0, 0};
  for (int rep = 0; rep < kReplicates; ++rep) {
    const double V = 1.0 / DrawGamma(rng, 3.0, 2.0), sv = std::sqrt(V);
    double beta[2] = {sv * N(rng), 1.0 + sv * std::sqrt(0.5) * N(rng)};
    DynamicLinearModel<2> f(o);
    for (int t = 0; t < 6; ++t) {
      if (t > 0) {
        beta[0] += sv * std::sqrt(0.1) * N(rng);
        beta[1] += sv * std::sqrt(0.05) * N(rng);
      }
      const double x[2] = {1.0, N(rng)};
      Sample s;
      s.x = x;
      s.y = beta[0] + beta[1] * x[1] + sv * N(rng);
      ASSERT_TRUE(f.Update(s).ok());
    }
    const ParameterReport r = f.Report(kLevel);
    for (int j = 0; j < 2; ++j) cover[j] += Covers(r, j, beta[j]);
  }
  Print("dlm learned-V beta0", cover[0]);
  Print("dlm learned-V beta1", cover[1]);
  for (int j = 0; j < 2; ++j) EXPECT_NEAR(cover[j] / double(kReplicates), kLevel, kBand) << j;
}

}  // namespace
}  // namespace bayline::est
