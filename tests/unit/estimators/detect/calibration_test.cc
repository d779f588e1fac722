#include "estimators/detect/calibration.h"

#include <gtest/gtest.h>

#include <cmath>
#include <vector>

namespace bayline::est {
namespace {

TEST(ChartsCalibrationTest, CusumHitsTheTargetWithHalfTheShiftAsReference) {
  for (double arl0 : {50.0, 370.0, 5000.0}) {
    for (double d : {0.5, 1.0, 2.0}) {
      CusumOptions o;
      o.holdoff = 7;
      o.direction = Direction::kUp;
      ASSERT_TRUE(CalibrateCusum({arl0, d}, &o).ok());
      EXPECT_DOUBLE_EQ(o.k, d / 2);
      EXPECT_NEAR(CusumArl(o, 0.0), arl0, 1e-6 * arl0);
      EXPECT_EQ(o.holdoff, 7);  // untouched fields kept
      EXPECT_EQ(o.direction, Direction::kUp);
    }
  }
}

TEST(ChartsCalibrationTest, CusumHeadStartIsAFractionOfTheSolvedInterval) {
  CusumOptions o;
  ASSERT_TRUE(CalibrateCusum({500, 1.0}, &o, 0.5).ok());
  EXPECT_DOUBLE_EQ(o.head_start, 0.5 * o.h);
  EXPECT_NEAR(CusumArl(o, 0.0), 500, 1e-6 * 500);
  CusumOptions plain;
  ASSERT_TRUE(CalibrateCusum({500, 1.0}, &plain).ok());
  EXPECT_GT(o.h, plain.h);  // the head start's early alarms are paid for by a wider interval
}

TEST(ChartsCalibrationTest, EwmaHitsTheTargetAndItsLambdaIsNearOptimal) {
  for (EwmaLimits lim : {EwmaLimits::kExact, EwmaLimits::kAsymptotic}) {
    EwmaOptions o;
    o.limits = lim;
    ASSERT_TRUE(CalibrateEwma({370, 1.0}, &o).ok());
    EXPECT_EQ(o.limits, lim);
    EXPECT_NEAR(EwmaArl(o, 0.0), 370, 1e-6 * 370);
    // Rule check on the asymptotic-limit chart: neighbouring lambdas, recalibrated, are not better.
    auto arl_at_d = [](double lambda) {
      EwmaOptions e;
      e.limits = EwmaLimits::kAsymptotic;
      e.lambda = lambda;
      EXPECT_TRUE(CalibrateEwmaWidth(370, &e).ok());
      return EwmaArl(e, 1.0);
    };
    const double best = arl_at_d(o.lambda);
    EXPECT_LE(best, arl_at_d(o.lambda * 1.6) * 1.002);
    EXPECT_LE(best, arl_at_d(o.lambda / 1.6) * 1.002);
  }
  // A larger design shift wants a larger lambda (common practice, no source).
  EwmaOptions small, large;
  ASSERT_TRUE(CalibrateEwma({370, 0.5}, &small).ok());
  ASSERT_TRUE(CalibrateEwma({370, 2.5}, &large).ok());
  EXPECT_LT(small.lambda, large.lambda);
}

TEST(ChartsCalibrationTest, RejectsBadTargetsAndLeavesOptionsUnchanged) {
  CusumOptions c;
  const double h = c.h;
  EXPECT_EQ(CalibrateCusum({1.0, 1.0}, &c).code(), ErrorCode::kInvalidConfig);
  EXPECT_EQ(CalibrateCusum({500, 0.0}, &c).code(), ErrorCode::kInvalidConfig);
  EXPECT_EQ(CalibrateCusum({500, 1.0}, &c, 1.0).code(), ErrorCode::kInvalidConfig);
  EXPECT_EQ(c.h, h);
  EwmaOptions e;
  EXPECT_NE(CalibrateEwma({NAN, 1.0}, &e).message().find("arl0"), std::string::npos);
  EXPECT_EQ(e.L, EwmaOptions().L);
  GlrOptions g;
  EXPECT_EQ(CalibrateGlr({500, -1}, &g).code(), ErrorCode::kInvalidConfig);
}

TEST(ChartsCalibrationTest, SimulatedCalibrationIsReproducibleAndUsesTheWindowRule) {
  SimulationBudget b;
  b.runs = 400;
  GlrOptions g1, g2;
  g1.window = g2.window = 0;  // automatic window
  ASSERT_TRUE(CalibrateGlr({100, 1.0}, &g1, b).ok());
  ASSERT_TRUE(CalibrateGlr({100, 1.0}, &g2, b).ok());
  EXPECT_EQ(g1.threshold, g2.threshold);
  EXPECT_EQ(g1.window, std::lround(8 * std::log(100.0)));  // 8 ln(ARL0) / D^2
  PageHinkleyOptions p;
  ASSERT_TRUE(CalibratePageHinkley({100, 1.0}, &p, b).ok());
  EXPECT_DOUBLE_EQ(p.delta, 0.5);
  EXPECT_GT(p.threshold, 0.0);
}

TEST(ChartsCalibrationTest, ProfilesListTheArlAtEachShift) {
  CusumOptions c;
  ASSERT_TRUE(CalibrateCusum({500, 1.0}, &c).ok());
  const std::vector<double> shifts = {0.0, 1.0, 2.0};
  const auto arl = CusumArlProfile(c, shifts);
  ASSERT_EQ(arl.size(), 3u);
  EXPECT_NEAR(arl[0], 500, 1e-6 * 500);
  EXPECT_EQ(arl[1], CusumArl(c, 1.0));
  const auto e = EwmaArlProfile(EwmaOptions{}, shifts);
  EXPECT_EQ(e[2], EwmaArl(EwmaOptions{}, 2.0));
}

}  // namespace
}  // namespace bayline::est
