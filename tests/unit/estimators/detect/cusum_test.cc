#include "estimators/detect/cusum.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <random>

#include "tests/unit/estimators/detect/test_util.h"

namespace bayline::est {
namespace {

using testing::Mark;

TEST(ChartsCusumTest, ValidateNamesTheBadField) {
  CusumOptions o;
  EXPECT_TRUE(o.Validate().ok());
  o.k = -0.1;
  EXPECT_NE(o.Validate().message().find("k"), std::string::npos);
  o = CusumOptions();
  o.h = 0;
  EXPECT_EQ(o.Validate().code(), ErrorCode::kInvalidConfig);
  o = CusumOptions();
  o.head_start = o.h;  // must be < h
  EXPECT_NE(o.Validate().message().find("head_start"), std::string::npos);
}

TEST(ChartsCusumTest, FollowsTheTabularRecursionOnBothSides) {
  CusumOptions o;
  o.k = 0.3;
  o.h = 1e9;  // never alarms: compare the raw statistic
  Cusum chart(o);
  std::mt19937_64 rng(1);
  std::normal_distribution<double> normal(0.2, 1.3);
  double up = 0, down = 0;
  for (int i = 0; i < 5000; ++i) {
    const double z = normal(rng);
    up = std::max(0.0, up + z - o.k);
    down = std::max(0.0, down - z - o.k);
    const DetectorEvent e = chart.Update(z, Mark(i));
    ASSERT_NEAR(chart.state().upper, up, 1e-12 * (1 + up));
    ASSERT_NEAR(chart.state().lower, down, 1e-12 * (1 + down));
    ASSERT_EQ(e.statistic, std::max(chart.state().upper, chart.state().lower));
  }
}

TEST(ChartsCusumTest, AlarmNamesOnsetAndShiftOfAStepChange) {
  CusumOptions o;  // k = 0.5, h = 5
  Cusum chart(o);
  for (int i = 0; i < 100; ++i) ASSERT_FALSE(chart.Update(0.0, Mark(i)).raised);
  // A clean step of +2 from observation 100: C+ = 1.5 n, crossing h = 5 at n = 4.
  DetectorEvent e;
  int i = 100;
  for (; i < 110; ++i) {
    e = chart.Update(2.0, Mark(i));
    if (e.raised) break;
  }
  ASSERT_TRUE(e.raised);
  EXPECT_EQ(i, 103);
  EXPECT_EQ(e.direction, Direction::kUp);
  EXPECT_EQ(e.onset_seq, 100);
  EXPECT_EQ(e.onset_time, 1000.0);
  EXPECT_DOUBLE_EQ(e.shift, 2.0);  // k + C/N = 0.5 + 6/4
  EXPECT_DOUBLE_EQ(e.statistic, 6.0);
}

TEST(ChartsCusumTest, DownwardStepGivesNegativeShift) {
  Cusum chart(CusumOptions{});
  DetectorEvent e;
  for (int i = 0; i < 20 && !e.raised; ++i) e = chart.Update(i < 5 ? 0.0 : -1.5, Mark(i));
  ASSERT_TRUE(e.raised);
  EXPECT_EQ(e.direction, Direction::kDown);
  EXPECT_EQ(e.onset_seq, 5);
  EXPECT_DOUBLE_EQ(e.shift, -1.5);
}

TEST(ChartsCusumTest, HeadStartAppliesAtStartAndAfterAnAlarm) {
  CusumOptions o;
  o.h = 4.0;
  o.head_start = 2.0;
  Cusum chart(o);
  EXPECT_EQ(chart.state().upper, 2.0);
  EXPECT_EQ(chart.state().lower, 2.0);
  // From the head start, a step of 1.5 (C+ grows by 1) crosses after 3 observations.
  DetectorEvent e;
  int i = 0;
  for (; i < 10 && !e.raised; ++i) e = chart.Update(1.5, Mark(i));
  EXPECT_EQ(i, 3);
  EXPECT_EQ(e.onset_seq, 0);  // no zero since the restart: onset = first observation after it
  EXPECT_EQ(chart.state().upper, 2.0);
  o.restart_at_head_start = false;
  Cusum zero_restart(o);
  for (int j = 0; j < 3; ++j) zero_restart.Update(1.5, Mark(j));
  EXPECT_EQ(zero_restart.state().upper, 0.0);
}

TEST(ChartsCusumTest, RestoreRejectsImpossibleStateAndKeepsTheOldOne) {
  Cusum chart(CusumOptions{});
  chart.Update(3.0, Mark(0));
  const double before = chart.state().upper;
  Cusum::State bad = chart.state();
  bad.lower = -1.0;
  EXPECT_EQ(chart.Restore(bad).code(), ErrorCode::kInvalidState);
  bad = chart.state();
  bad.upper_count = 1.5;
  EXPECT_EQ(chart.Restore(bad).code(), ErrorCode::kInvalidState);
  bad = chart.state();
  bad.cycle.holdoff_left = -2;
  EXPECT_EQ(chart.Restore(bad).code(), ErrorCode::kInvalidState);
  EXPECT_EQ(chart.state().upper, before);
}

}  // namespace
}  // namespace bayline::est
