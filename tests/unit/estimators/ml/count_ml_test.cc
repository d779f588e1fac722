// Poisson, binomial and exponential: closed-form estimators over discounted sums.
#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <random>
#include <vector>

#include "estimators/ml/binomial_ml.h"
#include "estimators/ml/exponential_ml.h"
#include "estimators/ml/poisson_ml.h"
#include "tests/unit/estimators/ml/ml_test_util.h"

namespace bayline::est {
namespace {

using testing::RelNear;
using testing::Y;
constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr double kInf = std::numeric_limits<double>::infinity();

Sample Count(double y, double exposure, double weight = 1.0) {
  Sample s = Y(y, weight);
  s.exposure = exposure;
  return s;
}
Sample Trials(double y, double trials, double weight = 1.0) {
  Sample s = Y(y, weight);
  s.trials = trials;
  return s;
}
// log y! written out as a sum, independent of the library's LogGamma.
double LogFactorial(double y) {
  double l = 0;
  for (int k = 2; k <= static_cast<int>(y); ++k) l += std::log(static_cast<double>(k));
  return l;
}

TEST(PoissonMlTest, RateIsWeightedCountsOverWeightedExposure) {
  std::mt19937_64 rng(21);
  std::uniform_real_distribution<double> expo(0.5, 4.0);
  PoissonMl p;
  double sy = 0, se = 0;
  std::vector<Sample> data;
  for (int i = 0; i < 2000; ++i) {
    const double e = expo(rng);
    std::poisson_distribution<int> pd(3.0 * e);
    const double w = (i % 5 == 0) ? 2.0 : 1.0;
    data.push_back(Count(pd(rng), e, w));
    ASSERT_TRUE(p.Update(data.back()).ok());
    sy += w * data.back().y;
    se += w * e;
  }
  const double rate = sy / se;
  EXPECT_TRUE(RelNear(p.rate(), rate, 1e-13));
  double ll = 0;
  for (const Sample& s : data)
    ll += s.weight * (s.y * std::log(rate * s.exposure) - rate * s.exposure - LogFactorial(s.y));
  const ParameterReport r = p.Report();
  ASSERT_TRUE(r.identifiable);
  EXPECT_TRUE(RelNear(r.log_likelihood, ll, 1e-11));
  EXPECT_TRUE(RelNear(r.std_error[0], std::sqrt(rate / se), 1e-13));
  EXPECT_NEAR(p.rate(), 3.0, 4 * r.std_error[0]);
}

TEST(PoissonMlTest, ForgettingTracksAStepInTheRate) {
  PoissonMl::Options o;
  o.forgetting.lambda = 0.98;
  PoissonMl p(o);
  std::mt19937_64 rng(22);
  std::poisson_distribution<int> before(2.0), after(8.0);
  for (int i = 0; i < 1000; ++i) ASSERT_TRUE(p.Update(Count(before(rng), 1.0)).ok());
  EXPECT_NEAR(p.rate(), 2.0, 0.6);
  for (int i = 0; i < 1000; ++i) ASSERT_TRUE(p.Update(Count(after(rng), 1.0)).ok());
  EXPECT_NEAR(p.rate(), 8.0, 1.2);
  EXPECT_NEAR(p.state().weight_sum, 1.0 / (1.0 - 0.98), 1e-6);
}

TEST(PoissonMlTest, ZeroCountsAreNotIdentifiableAndInnovationNeedsARate) {
  PoissonMl p;
  Innovation inn;
  ASSERT_TRUE(p.Update(Count(0, 1.0), &inn).ok());
  EXPECT_FALSE(inn.valid);
  EXPECT_FALSE(p.Report().identifiable);
  EXPECT_EQ(p.log_likelihood(), 0.0);  // rate 0 explains zeros with probability one
  ASSERT_TRUE(p.Update(Count(4, 1.0)).ok());
  ASSERT_TRUE(p.Update(Count(3, 2.0), &inn).ok());
  ASSERT_TRUE(inn.valid);
  EXPECT_DOUBLE_EQ(inn.prediction, 2.0 * 2.0);  // rate 4 / 2 = 2, exposure 2
  EXPECT_DOUBLE_EQ(inn.predictive_sd, 2.0);
  EXPECT_DOUBLE_EQ(inn.standardized, (3.0 - 4.0) / 2.0);
  EXPECT_TRUE(RelNear(inn.log_predictive, 3 * std::log(4.0) - 4.0 - std::log(6.0), 1e-14));
}

TEST(PoissonMlTest, RejectsBadInputAndChangesNothing) {
  PoissonMl p;
  ASSERT_TRUE(p.Update(Count(2, 1.0)).ok());
  testing::ExpectRejected(p, Count(-1, 1.0), ErrorCode::kOutOfDomain);
  testing::ExpectRejected(p, Count(1.5, 1.0), ErrorCode::kOutOfDomain);  // non-integer count
  testing::ExpectRejected(p, Count(1, 0.0), ErrorCode::kOutOfDomain);
  testing::ExpectRejected(p, Count(1, -2.0), ErrorCode::kOutOfDomain);
  testing::ExpectRejected(p, Count(1, kInf), ErrorCode::kNonFinite);
  testing::ExpectRejected(p, Count(kNaN, 1.0), ErrorCode::kNonFinite);
  testing::ExpectRejected(p, Count(1, 1.0, 0.0), ErrorCode::kInvalidWeight);
  const double x[2] = {1, 2};
  Sample s = Count(1, 1.0);
  s.x = x;
  testing::ExpectRejected(p, s, ErrorCode::kWrongRegressorCount);
}

TEST(PoissonMlTest, RestoreContinuesBitIdenticallyAndRejectsBadState) {
  std::vector<Sample> first, rest;
  for (int i = 0; i < 40; ++i) (i < 15 ? first : rest).push_back(Count(i % 7, 0.5 + (i % 3)));
  PoissonMl::Options o;
  o.forgetting.lambda = 0.95;
  testing::ExpectRoundTripBitIdentical([&] { return PoissonMl(o); }, first, rest);
  PoissonMl p;
  for (const Sample& s : first) ASSERT_TRUE(p.Update(s).ok());
  testing::ExpectTruncatedAndExtendedRejected(p);
  PoissonMl::State bad = p.state();
  bad.sum_y = -1;
  EXPECT_EQ(p.Restore(bad).code(), ErrorCode::kInvalidState);
  bad = p.state();
  bad.sum_exposure = 0;
  EXPECT_EQ(p.Restore(bad).code(), ErrorCode::kInvalidState);
}

TEST(BinomialMlTest, ProbabilityIsWeightedSuccessesOverWeightedTrials) {
  std::mt19937_64 rng(23);
  BinomialMl b;
  std::vector<Sample> data;
  double sy = 0, sn = 0;
  for (int i = 0; i < 3000; ++i) {
    const int n = 1 + static_cast<int>(i % 9);
    std::binomial_distribution<int> bd(n, 0.27);
    const double w = 1.0 + (i % 2);
    data.push_back(Trials(bd(rng), n, w));
    ASSERT_TRUE(b.Update(data.back()).ok());
    sy += w * data.back().y;
    sn += w * n;
  }
  const double p = sy / sn;
  EXPECT_TRUE(RelNear(b.probability(), p, 1e-13));
  double ll = 0;
  for (const Sample& s : data) {
    ll += s.weight * (LogFactorial(s.trials) - LogFactorial(s.y) - LogFactorial(s.trials - s.y) +
                      s.y * std::log(p) + (s.trials - s.y) * std::log(1 - p));
  }
  const ParameterReport r = b.Report();
  ASSERT_TRUE(r.identifiable);
  EXPECT_TRUE(RelNear(r.log_likelihood, ll, 1e-11));
  EXPECT_TRUE(RelNear(r.std_error[0], std::sqrt(p * (1 - p) / sn), 1e-13));
  EXPECT_NEAR(b.probability(), 0.27, 4 * r.std_error[0]);
}

TEST(BinomialMlTest, BoundaryEstimatesAreNotIdentifiable) {
  BinomialMl b;
  ASSERT_TRUE(b.Update(Trials(0, 5)).ok());
  EXPECT_FALSE(b.Report().identifiable);
  ASSERT_TRUE(b.Update(Trials(3, 3)).ok());
  EXPECT_TRUE(b.Report().identifiable);
  Innovation inn;
  ASSERT_TRUE(b.Update(Trials(1, 4), &inn).ok());  // p = 3/8 before
  ASSERT_TRUE(inn.valid);
  EXPECT_DOUBLE_EQ(inn.prediction, 1.5);
  EXPECT_DOUBLE_EQ(inn.predictive_sd, std::sqrt(4 * 0.375 * 0.625));
  EXPECT_TRUE(
      RelNear(inn.log_predictive, std::log(4.0) + std::log(0.375) + 3 * std::log(0.625), 1e-14));
}

TEST(BinomialMlTest, RejectsBadInputAndChangesNothing) {
  BinomialMl b;
  ASSERT_TRUE(b.Update(Trials(1, 3)).ok());
  testing::ExpectRejected(b, Trials(4, 3), ErrorCode::kOutOfDomain);  // successes above trials
  testing::ExpectRejected(b, Trials(-1, 3), ErrorCode::kOutOfDomain);
  testing::ExpectRejected(b, Trials(1.5, 3), ErrorCode::kOutOfDomain);  // non-integer successes
  testing::ExpectRejected(b, Trials(1, 2.5), ErrorCode::kOutOfDomain);  // non-integer trials
  testing::ExpectRejected(b, Trials(0, 0), ErrorCode::kOutOfDomain);    // trials <= 0
  testing::ExpectRejected(b, Trials(0, -3), ErrorCode::kOutOfDomain);
  testing::ExpectRejected(b, Trials(1, kNaN), ErrorCode::kNonFinite);
  testing::ExpectRejected(b, Trials(1, 3, -1.0), ErrorCode::kInvalidWeight);
}

TEST(BinomialMlTest, RestoreContinuesBitIdenticallyAndRejectsBadState) {
  std::vector<Sample> first, rest;
  for (int i = 0; i < 40; ++i) (i < 15 ? first : rest).push_back(Trials(i % 4, 3 + (i % 2)));
  BinomialMl::Options o;
  o.forgetting.half_life = 5.0;
  for (int i = 0; i < 15; ++i) first[i].time = i;
  for (int i = 0; i < 25; ++i) rest[i].time = 15 + i;
  testing::ExpectRoundTripBitIdentical([&] { return BinomialMl(o); }, first, rest);
  BinomialMl b;
  for (const Sample& s : first) ASSERT_TRUE(b.Update(s).ok());
  testing::ExpectTruncatedAndExtendedRejected(b);
  BinomialMl::State bad = b.state();
  bad.sum_y = bad.sum_trials + 1;
  EXPECT_EQ(b.Restore(bad).code(), ErrorCode::kInvalidState);
}

TEST(ExponentialMlTest, RateIsReciprocalWeightedMeanAndLogLikelihoodMatches) {
  std::mt19937_64 rng(24);
  std::exponential_distribution<double> ed(0.25);
  ExponentialMl e;
  std::vector<double> y;
  for (int i = 0; i < 2000; ++i) {
    y.push_back(ed(rng));
    ASSERT_TRUE(e.Update(Y(y.back())).ok());
  }
  long double sum = 0;
  for (double v : y) sum += v;
  const double rate = static_cast<double>(y.size() / sum);
  EXPECT_TRUE(RelNear(e.rate(), rate, 1e-13));
  double ll = 0;
  for (double v : y) ll += std::log(rate) - rate * v;
  const ParameterReport r = e.Report();
  EXPECT_TRUE(RelNear(r.log_likelihood, ll, 1e-11));
  EXPECT_TRUE(RelNear(r.std_error[0], rate / std::sqrt(2000.0), 1e-13));
  EXPECT_NEAR(e.rate(), 0.25, 4 * r.std_error[0]);
}

TEST(ExponentialMlTest, InnovationAndRejections) {
  ExponentialMl e;
  Innovation inn;
  ASSERT_TRUE(e.Update(Y(2.0), &inn).ok());
  EXPECT_FALSE(inn.valid);
  ASSERT_TRUE(e.Update(Y(5.0), &inn).ok());
  ASSERT_TRUE(inn.valid);
  EXPECT_DOUBLE_EQ(inn.prediction, 2.0);
  EXPECT_DOUBLE_EQ(inn.predictive_sd, 2.0);
  EXPECT_DOUBLE_EQ(inn.standardized, 1.5);
  EXPECT_TRUE(RelNear(inn.log_predictive, std::log(0.5) - 2.5, 1e-15));
  testing::ExpectRejected(e, Y(0.0), ErrorCode::kOutOfDomain);
  testing::ExpectRejected(e, Y(-3.0), ErrorCode::kOutOfDomain);
  testing::ExpectRejected(e, Y(kInf), ErrorCode::kNonFinite);
  testing::ExpectRejected(e, Y(1.0, kInf), ErrorCode::kNonFinite);
  testing::ExpectRejected(e, Y(1.0, 0.0), ErrorCode::kInvalidWeight);
}

TEST(ExponentialMlTest, RestoreContinuesBitIdenticallyAndRejectsBadState) {
  std::vector<Sample> first, rest;
  for (int i = 0; i < 40; ++i) (i < 15 ? first : rest).push_back(Y(0.1 + 0.3 * (i % 5)));
  ExponentialMl::Options o;
  o.forgetting.lambda = 0.9;
  testing::ExpectRoundTripBitIdentical([&] { return ExponentialMl(o); }, first, rest);
  ExponentialMl e;
  ASSERT_TRUE(e.Update(Y(1.0)).ok());
  testing::ExpectTruncatedAndExtendedRejected(e);
  ExponentialMl::State bad = e.state();
  bad.mean = 0;
  EXPECT_EQ(e.Restore(bad).code(), ErrorCode::kInvalidState);
}

}  // namespace
}  // namespace bayline::est
