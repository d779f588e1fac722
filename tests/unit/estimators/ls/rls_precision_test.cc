// Double-double arithmetic, the extended-precision mode, the fast t log-density and the
// ill-conditioning flag.
#include <gtest/gtest.h>

#include <cmath>
#include <random>
#include <vector>

#include "estimators/core/distributions.h"
#include "estimators/core/t_log_density.h"
#include "estimators/ls/double_double.h"
#include "estimators/ls/recursive_least_squares.h"
#include "estimators/ls/rls.h"
#include "tests/unit/estimators/ls/test_util.h"

namespace bayline::est {
namespace {

using testing::MakeData;
using testing::MaxRelErr;
using testing::SampleAt;

TEST(DoubleDoubleTest, KeepsDigitsADoubleLoses) {
  const DoubleDouble one(1.0), tiny(std::ldexp(1.0, -80));
  const DoubleDouble sum = one + tiny;
  EXPECT_EQ((sum - one).hi, std::ldexp(1.0, -80));  // exact in double-double, lost in double
  // (1 + 2^-40)^2 = 1 + 2^-39 + 2^-80 exactly.
  const DoubleDouble a = DoubleDouble(1.0) + DoubleDouble(std::ldexp(1.0, -40));
  const DoubleDouble sq = a * a;
  EXPECT_EQ(sq.hi, 1.0 + std::ldexp(1.0, -39));
  EXPECT_EQ(sq.lo, std::ldexp(1.0, -80));
  // sqrt(2)^2 and (1/3)*3 back to 2 and 1 to ~1e-31 (common practice, no source).
  const DoubleDouble r2 = Sqrt(DoubleDouble(2.0));
  EXPECT_LT(std::fabs((r2 * r2 - DoubleDouble(2.0)).hi), 1e-31);
  const DoubleDouble third = DoubleDouble(1.0) / DoubleDouble(3.0);
  EXPECT_LT(std::fabs((third * 3.0 - DoubleDouble(1.0)).hi), 1e-31);
}

TEST(DoubleDoubleTest, ParsesDecimalsBeyondDoublePrecision) {
  DoubleDouble v;
  ASSERT_TRUE(ParseDoubleDouble("0.1", &v));
  EXPECT_EQ(v.hi, 0.1);
  EXPECT_LT(std::fabs((v * 10.0 - DoubleDouble(1.0)).hi), 1e-31);  // 10 * 0.1 = 1 to dd accuracy
  EXPECT_NE(v.lo, 0.0);                                            // 0.1 is not a binary fraction
  ASSERT_TRUE(ParseDoubleDouble("-0.670191154593408E-01", &v));
  EXPECT_EQ(v.hi, -0.670191154593408E-01);
  ASSERT_TRUE(ParseDoubleDouble("760.", &v));
  EXPECT_EQ(v.hi, 760.0);
  EXPECT_EQ(v.lo, 0.0);
  ASSERT_TRUE(ParseDoubleDouble(".11019", &v));
  EXPECT_EQ(v.hi, 0.11019);
  ASSERT_TRUE(ParseDoubleDouble("1.5D+3", &v));
  EXPECT_EQ(v.hi, 1500.0);
  EXPECT_FALSE(ParseDoubleDouble("", &v));
  EXPECT_FALSE(ParseDoubleDouble("1.2.3", &v));
  EXPECT_FALSE(ParseDoubleDouble("abc", &v));
  EXPECT_FALSE(ParseDoubleDouble("1e", &v));
}

// The series in t_log_density.h against the defining formula evaluated in long double
// (lgammal; 64-bit significand, so the cancellation between the log-gammas stays below ~1e-14
// for dof <= 1e5), and against the library density below the switch-over at dof = 30.
long double ReferenceTLogPdf(long double u, long double dof) {
  const long double pi = 3.141592653589793238462643383279502884L;
  return std::lgamma((dof + 1) / 2) - std::lgamma(dof / 2) - 0.5L * std::log(dof * pi) -
         (dof + 1) / 2 * std::log1p(u * u / dof);
}

TEST(StudentTLogDensityTest, MatchesDefiningFormula) {
  for (double dof : {30.0, 31.5, 47.25, 100.0, 1e3, 1e4, 1e5}) {
    for (double u : {0.0, 0.3, -1.7, 4.0, 25.0}) {
      const double ref = static_cast<double>(ReferenceTLogPdf(u, dof));
      EXPECT_NEAR(StudentTLogDensity(u, dof), ref, 1e-13 * (1.0 + std::fabs(ref)))
          << dof << " " << u;
    }
  }
  for (double dof : {1.0, 5.0, 29.9}) {
    EXPECT_EQ(StudentTLogDensity(1.3, dof), dist::StudentTLogPdf(1.3, dof));
  }
  EXPECT_NEAR(Log1pFast(1e-12), std::log1p(1e-12), 1e-27);
  EXPECT_NEAR(Log1pFast(3.0), std::log1p(3.0), 1e-15);
}

TEST(RlsExtendedTest, AgreesWithDoubleModeOnWellConditionedData) {
  Eigen::VectorXd theta(4);
  theta << 1.0, -2.0, 0.5, 3.0;
  const auto d = MakeData(200, theta, 0.2, 51);
  RlsOptions ext;
  ext.extended_precision = true;
  Rls a(RlsOptions{}, 4), b(ext, 4);
  std::vector<double> buf;
  for (int i = 0; i < 200; ++i) {
    Innovation ia, ib;
    RecursiveResidual ra, rb;
    ASSERT_TRUE(a.Update(SampleAt(d, i, &buf), &ia, &ra).ok());
    ASSERT_TRUE(b.Update(SampleAt(d, i, &buf), &ib, &rb).ok());
    ASSERT_EQ(ia.valid, ib.valid);
    if (ia.valid) {
      EXPECT_NEAR(ia.standardized, ib.standardized, 1e-10);
    }
    if (ra.valid) {
      EXPECT_NEAR(ra.value, rb.value, 1e-10);
    }
  }
  EXPECT_LT(MaxRelErr(a.coefficients(), b.coefficients()), 1e-12);
  EXPECT_LT((a.covariance() - b.covariance()).norm() / a.covariance().norm(), 1e-12);
}

TEST(RlsExtendedTest, InflationScalesCovarianceInExtendedMode) {
  Eigen::VectorXd theta(3);
  theta << 1.0, 2.0, -1.0;
  const auto d = MakeData(100, theta, 0.3, 53);
  RlsOptions ext;
  ext.extended_precision = true;
  Rls est(ext, 3);
  std::vector<double> buf;
  for (int i = 0; i < 100; ++i) ASSERT_TRUE(est.Update(SampleAt(d, i, &buf)).ok());
  const Eigen::MatrixXd cov = est.covariance();
  const Eigen::VectorXd th = est.coefficients();
  ASSERT_TRUE(est.InflateUncertainty(25.0).ok());
  EXPECT_LT((est.covariance() - 25.0 * cov).norm() / (25.0 * cov.norm()), 1e-14);
  EXPECT_LT(MaxRelErr(est.coefficients(), th), 1e-15);
}

// A row known to more digits than a double holds: x = 1 + 2^-60 is 1 in double. In extended mode
// with the low part supplied, the two-point fit recovers the slope that double rows cannot see.
TEST(RlsExtendedTest, LowOrderPartsOfRowsAreUsed) {
  RlsOptions ext;
  ext.extended_precision = true;
  ext.rank_tolerance = 1e-25;  // the two rows differ by 2^-60: far below the default tolerance
  RecursiveLeastSquares<2> est(ext);
  std::vector<double> x = {1.0, 1.0}, lo = {0.0, 0.0};
  Sample s;
  s.x = x;
  s.y = 1.0;
  ASSERT_TRUE(est.UpdateExtended(s, lo, 0.0).ok());
  lo[1] = std::ldexp(1.0, -60);  // second row (1, 1 + 2^-60), y = 1 + 2^-60: slope 1, intercept 0
  ASSERT_TRUE(est.UpdateExtended(s, lo, std::ldexp(1.0, -60)).ok());
  ASSERT_TRUE(est.identifiable());
  EXPECT_NEAR(est.coefficients()(1), 1.0, 1e-6);
  EXPECT_NEAR(est.coefficients()(0), 0.0, 1e-6);
  // Bad low parts are rejected without effect.
  const std::vector<double> short_lo = {0.0};
  EXPECT_EQ(est.UpdateExtended(s, short_lo, 0.0).code(), ErrorCode::kWrongRegressorCount);
  lo[0] = std::nan("");
  EXPECT_EQ(est.UpdateExtended(s, lo, 0.0).code(), ErrorCode::kNonFinite);
  lo[0] = 0.0;
  EXPECT_EQ(est.UpdateExtended(s, lo, INFINITY).code(), ErrorCode::kNonFinite);
  EXPECT_DOUBLE_EQ(est.effective_n(), 2.0);
}

// Degree-10 polynomial on x in [-9, -3] (the shape of NIST Filip): flagged in double, where the
// least-squares sensitivity exceeds 1e13; a degree-2 fit of the same x is not flagged.
TEST(RlsConditionTest, FlagsIllConditionedPolynomialFit) {
  std::mt19937_64 rng(52);
  std::uniform_real_distribution<double> ux(-9.0, -3.0);
  std::normal_distribution<double> g;
  Rls high(RlsOptions{}, 11), low(RlsOptions{}, 3);
  std::vector<double> xh(11), xl(3);
  for (int i = 0; i < 100; ++i) {
    const double v = ux(rng);
    double pw = 1.0;
    for (int k = 0; k < 11; ++k, pw *= v) xh[static_cast<std::size_t>(k)] = pw;
    for (int k = 0; k < 3; ++k) xl[static_cast<std::size_t>(k)] = xh[static_cast<std::size_t>(k)];
    Sample s;
    s.y = 0.8 + 0.01 * v + 0.003 * g(rng);
    s.x = xh;
    ASSERT_TRUE(high.Update(s).ok());
    s.x = xl;
    ASSERT_TRUE(low.Update(s).ok());
  }
  EXPECT_GT(high.ErrorSensitivity(), 1e13);
  EXPECT_TRUE(high.ill_conditioned());
  EXPECT_LT(low.ErrorSensitivity(), 1e6);
  EXPECT_FALSE(low.ill_conditioned());
  // Column-scaled condition number: a diagonal R with any scaling has kappa = 1.
  Rls diag(RlsOptions{}, 2);
  std::vector<double> x(2);
  Sample s;
  s.x = x;
  x = {1e8, 0.0};
  s.y = 1.0;
  ASSERT_TRUE(diag.Update(s).ok());
  x = {0.0, 1e-8};
  ASSERT_TRUE(diag.Update(s).ok());
  EXPECT_NEAR(diag.ConditionNumber(), 1.0, 1e-12);
}

}  // namespace
}  // namespace bayline::est
