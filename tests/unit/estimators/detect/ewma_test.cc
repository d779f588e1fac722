#include "estimators/detect/ewma.h"

#include <gtest/gtest.h>

#include <cmath>
#include <random>

#include "tests/unit/estimators/detect/test_util.h"

namespace bayline::est {
namespace {

using testing::Mark;

TEST(ChartsEwmaTest, ValidateNamesTheBadField) {
  EwmaOptions o;
  EXPECT_TRUE(o.Validate().ok());
  o.lambda = 0.0;
  EXPECT_NE(o.Validate().message().find("lambda"), std::string::npos);
  o = EwmaOptions();
  o.L = -1;
  EXPECT_NE(o.Validate().message().find("L"), std::string::npos);
}

TEST(ChartsEwmaTest, ExactLimitsFollowTheTimeVaryingVariance) {
  EwmaOptions o;
  o.lambda = 0.15;
  o.L = 1e6;  // never alarms
  Ewma chart(o);
  std::mt19937_64 rng(3);
  std::normal_distribution<double> normal(0.0, 1.0);
  double z = 0;
  for (int i = 1; i <= 300; ++i) {
    const double x = normal(rng);
    z = (1 - o.lambda) * z + o.lambda * x;
    const DetectorEvent e = chart.Update(x, Mark(i));
    const double sd = std::sqrt(o.lambda / (2 - o.lambda) * (1 - std::pow(1 - o.lambda, 2.0 * i)));
    ASSERT_NEAR(e.threshold, o.L * sd, 1e-12 * o.L * sd) << i;
    ASSERT_NEAR(e.statistic, std::fabs(z), 1e-12) << i;
  }
}

TEST(ChartsEwmaTest, AsymptoticLimitsAreConstant) {
  EwmaOptions o;
  o.lambda = 0.2;
  o.L = 3.0;
  o.limits = EwmaLimits::kAsymptotic;
  Ewma chart(o);
  for (int i = 0; i < 5; ++i)
    EXPECT_DOUBLE_EQ(chart.Update(0.1, Mark(i)).threshold, 3.0 * std::sqrt(0.2 / 1.8));
}

TEST(ChartsEwmaTest, FirstObservationAlarmsExactlyBeyondLWithExactLimits) {
  // i = 1: Z_1 = lambda z, sigma_1 = lambda, so the exact-limit chart alarms iff |z| > L.
  EwmaOptions o;
  o.lambda = 0.1;
  o.L = 3.0;
  EXPECT_FALSE(Ewma(o).Update(2.999, Mark(0)).raised);
  EXPECT_TRUE(Ewma(o).Update(3.001, Mark(0)).raised);
  EXPECT_TRUE(Ewma(o).Update(-3.001, Mark(0)).raised);
}

TEST(ChartsEwmaTest, AlarmEstimatesTheShiftAndOnset) {
  EwmaOptions o;
  o.lambda = 0.2;
  o.L = 3.0;
  Ewma chart(o);
  for (int i = 0; i < 50; ++i) chart.Update(-0.01, Mark(i));
  DetectorEvent e;
  int i = 50;
  for (; i < 100 && !e.raised; ++i) e = chart.Update(2.0, Mark(i));
  ASSERT_TRUE(e.raised);
  EXPECT_EQ(e.direction, Direction::kUp);
  EXPECT_EQ(e.onset_seq, 50);
  // Z turned positive at 50 and alarms at 53 (2 (1 - 0.8^4) > 3 sqrt(0.2 / 1.8)); the shift is the
  // mean of z since the onset.
  EXPECT_EQ(i - 1, 53);
  EXPECT_DOUBLE_EQ(e.shift, 2.0);
}

}  // namespace
}  // namespace bayline::est
