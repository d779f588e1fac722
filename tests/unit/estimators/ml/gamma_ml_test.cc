#include "estimators/ml/gamma_ml.h"

#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <random>
#include <vector>

#include "estimators/ml/gamma_shape.h"
#include "tests/unit/estimators/ml/ml_test_util.h"

namespace bayline::est {
namespace {

using testing::RelNear;
using testing::Y;

// Digamma by a central difference of the C library's lgamma: an independent, low-accuracy check.
double DigammaByDifference(double k) {
  const double h = 1e-5 * k;
  return (std::lgamma(k + h) - std::lgamma(k - h)) / (2 * h);
}

TEST(GammaShapeTest, SolveInvertsGOverEightDecades) {
  for (double k = 1e-3; k < 1e9; k *= 1.7) {
    const double s = gamma_shape::G(k);
    ASSERT_GT(s, 0.0);
    EXPECT_TRUE(RelNear(gamma_shape::Solve(s), k, 1e-12)) << "k = " << k;
    EXPECT_TRUE(RelNear(gamma_shape::Solve(s, 3.0 * k), k, 1e-12)) << "warm start, k = " << k;
  }
}

TEST(GammaShapeTest, GAgreesWithAnIndependentDigamma) {
  for (double k : {0.05, 0.5, 1.0, 3.0, 9.99, 10.0, 10.01, 50.0}) {
    EXPECT_NEAR(gamma_shape::G(k), std::log(k) - DigammaByDifference(k), 1e-8 * (1 + 1 / k)) << k;
  }
  // The large-k series agrees with log k - psi(k) where both are accurate (common practice, no
  // source).
  const double below = std::nextafter(10.0, 0.0);
  EXPECT_TRUE(RelNear(gamma_shape::G(10.0), gamma_shape::G(below), 1e-13));
  EXPECT_TRUE(RelNear(gamma_shape::GPrime(10.0), gamma_shape::GPrime(below), 1e-11));
  // g(k) ~ 1/(2k) for large k (common practice, no source).
  EXPECT_TRUE(RelNear(gamma_shape::G(1e12), 0.5e-12, 1e-11));
}

TEST(GammaShapeTest, RejectsNonPositiveStatistic) {
  EXPECT_TRUE(std::isnan(gamma_shape::Solve(0.0)));
  EXPECT_TRUE(std::isnan(gamma_shape::Solve(-1e-3)));
  EXPECT_TRUE(std::isnan(gamma_shape::Solve(std::numeric_limits<double>::quiet_NaN())));
}

// Profile log-likelihood of the shape (rate at its conditional maximum k / ybar), from the data.
double ProfileLogLik(const std::vector<double>& y, double k) {
  double mean = 0;
  for (double v : y) mean += v;
  mean /= static_cast<double>(y.size());
  const double r = k / mean;
  double ll = 0;
  for (double v : y) ll += k * std::log(r) + (k - 1) * std::log(v) - r * v - std::lgamma(k);
  return ll;
}

TEST(GammaMlTest, ShapeMaximisesTheProfileLikelihood) {
  std::mt19937_64 rng(31);
  std::gamma_distribution<double> gd(2.5, 1.0 / 0.7);
  std::vector<double> y;
  GammaMl g;
  for (int i = 0; i < 3000; ++i) {
    y.push_back(gd(rng));
    ASSERT_TRUE(g.Update(Y(y.back())).ok());
  }
  // Golden-section search on log k, independent of the Newton solver.
  double a = std::log(0.1), b = std::log(100.0);
  const double phi = (std::sqrt(5.0) - 1) / 2;
  for (int it = 0; it < 200; ++it) {
    const double c = b - phi * (b - a), d = a + phi * (b - a);
    if (ProfileLogLik(y, std::exp(c)) > ProfileLogLik(y, std::exp(d)))
      b = d;
    else
      a = c;
  }
  const double k_search = std::exp(0.5 * (a + b));
  EXPECT_TRUE(RelNear(g.shape(), k_search, 1e-6));
  const ParameterReport r = g.Report();
  ASSERT_TRUE(r.identifiable);
  EXPECT_TRUE(RelNear(r.log_likelihood, ProfileLogLik(y, g.shape()), 1e-12));
  EXPECT_NEAR(g.shape(), 2.5, 4 * r.std_error[0]);
  EXPECT_NEAR(g.rate(), 0.7, 4 * r.std_error[1]);
  // Standard errors from the inverse Fisher information, written out with the difference digamma.
  const double k = g.shape(), rate = g.rate(), n = 3000;
  const double h = 1e-4;
  const double trigamma = (DigammaByDifference(k + h) - DigammaByDifference(k - h)) / (2 * h);
  EXPECT_TRUE(RelNear(r.std_error[0], std::sqrt(k / (n * (k * trigamma - 1))), 1e-4));
  EXPECT_TRUE(
      RelNear(r.std_error[1], std::sqrt(trigamma * rate * rate / (n * (k * trigamma - 1))), 1e-4));
}

TEST(GammaMlTest, ScaleEquivariant) {
  std::mt19937_64 rng(32);
  std::gamma_distribution<double> gd(0.8, 2.0);
  GammaMl a, b;
  for (int i = 0; i < 500; ++i) {
    const double v = gd(rng);
    ASSERT_TRUE(a.Update(Y(v)).ok());
    ASSERT_TRUE(b.Update(Y(v * 1024.0)).ok());  // a power of two: scaling is exact
  }
  EXPECT_TRUE(RelNear(a.shape(), b.shape(), 1e-12));
  EXPECT_TRUE(RelNear(a.rate(), 1024.0 * b.rate(), 1e-12));
}

TEST(GammaMlTest, TightLargeDataKeepPrecision) {
  // y = 1e9 (1 + 1e-4 z): shape about 1e8. Reference s from a centred long-double two-pass.
  std::mt19937_64 rng(33);
  std::normal_distribution<double> z;
  std::vector<double> y;
  GammaMl g;
  for (int i = 0; i < 2000; ++i) {
    y.push_back(1e9 * (1 + 1e-4 * z(rng)));
    ASSERT_TRUE(g.Update(Y(y.back())).ok());
  }
  long double mean = 0;
  for (double v : y) mean += v;
  mean /= y.size();
  long double s = 0;
  for (double v : y) s -= std::log1p(static_cast<long double>((v - mean) / mean));
  s /= y.size();
  const double k_ref = gamma_shape::Solve(static_cast<double>(s));
  EXPECT_TRUE(RelNear(g.shape(), k_ref, 1e-7));
  EXPECT_GT(g.shape(), 5e7);
}

TEST(GammaMlTest, WeightsAndForgettingEqualExplicitWeightedMeans) {
  GammaMl::Options o;
  o.forgetting.lambda = 0.95;
  GammaMl g(o);
  std::vector<double> y, w;
  std::mt19937_64 rng(34);
  std::gamma_distribution<double> gd(3.0, 1.0);
  for (int i = 0; i < 200; ++i) {
    y.push_back(gd(rng));
    w.push_back(1.0 + (i % 3));
    ASSERT_TRUE(g.Update(Y(y.back(), w.back())).ok());
  }
  long double sw = 0, sy = 0, sl = 0;
  for (std::size_t i = 0; i < y.size(); ++i) {
    const long double a = w[i] * std::pow(0.95L, static_cast<long double>(y.size() - 1 - i));
    sw += a;
    sy += a * y[i];
    sl += a * std::log(static_cast<long double>(y[i]));
  }
  const double s = static_cast<double>(std::log(sy / sw) - sl / sw);
  EXPECT_TRUE(RelNear(g.shape(), gamma_shape::Solve(s), 1e-10));
  EXPECT_TRUE(RelNear(g.mean(), static_cast<double>(sy / sw), 1e-13));
  EXPECT_TRUE(RelNear(g.Report().effective_n, static_cast<double>(sw), 1e-13));
}

TEST(GammaMlTest, EqualValuesAreNotIdentifiableAndInnovationFollows) {
  GammaMl g;
  Innovation inn;
  ASSERT_TRUE(g.Update(Y(2.0), &inn).ok());
  ASSERT_TRUE(g.Update(Y(2.0), &inn).ok());
  EXPECT_FALSE(inn.valid);
  EXPECT_FALSE(g.Report().identifiable);
  ASSERT_TRUE(g.Update(Y(3.0)).ok());
  const double k = g.shape(), r = g.rate();
  ASSERT_TRUE(std::isfinite(k));
  ASSERT_TRUE(g.Update(Y(4.0), &inn).ok());
  ASSERT_TRUE(inn.valid);
  EXPECT_DOUBLE_EQ(inn.prediction, k / r);
  EXPECT_TRUE(RelNear(inn.predictive_sd, std::sqrt(k) / r, 1e-15));
  EXPECT_TRUE(RelNear(inn.log_predictive,
                      k * std::log(r) + (k - 1) * std::log(4.0) - 4 * r - std::lgamma(k), 1e-12));
}

TEST(GammaMlTest, RejectsBadInputAndChangesNothing) {
  GammaMl g;
  ASSERT_TRUE(g.Update(Y(2.0)).ok());
  ASSERT_TRUE(g.Update(Y(3.0)).ok());
  testing::ExpectRejected(g, Y(0.0), ErrorCode::kOutOfDomain);
  testing::ExpectRejected(g, Y(-1.0), ErrorCode::kOutOfDomain);
  testing::ExpectRejected(g, Y(std::numeric_limits<double>::quiet_NaN()), ErrorCode::kNonFinite);
  testing::ExpectRejected(g, Y(1.0, 0.0), ErrorCode::kInvalidWeight);
}

TEST(GammaMlTest, RestoreContinuesBitIdenticallyAndRejectsBadState) {
  std::vector<Sample> first, rest;
  std::mt19937_64 rng(35);
  std::gamma_distribution<double> gd(1.7, 1.0);
  for (int i = 0; i < 60; ++i) (i < 20 ? first : rest).push_back(Y(gd(rng)));
  GammaMl::Options o;
  o.forgetting.lambda = 0.97;
  testing::ExpectRoundTripBitIdentical([&] { return GammaMl(o); }, first, rest);
  GammaMl g;
  for (const Sample& s : first) ASSERT_TRUE(g.Update(s).ok());
  testing::ExpectTruncatedAndExtendedRejected(g);
  GammaMl::State bad = g.state();
  bad.shape = -1;
  EXPECT_EQ(g.Restore(bad).code(), ErrorCode::kInvalidState);
  bad = g.state();
  bad.ref = 0;
  EXPECT_EQ(g.Restore(bad).code(), ErrorCode::kInvalidState);
}

}  // namespace
}  // namespace bayline::est
