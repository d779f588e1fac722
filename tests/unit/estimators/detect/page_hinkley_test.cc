#include "estimators/detect/page_hinkley.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <random>
#include <vector>

#include "tests/unit/estimators/detect/test_util.h"

namespace bayline::est {
namespace {

using testing::Mark;

TEST(ChartsPageHinkleyTest, MatchesTheDefinitionComputedFromScratch) {
  PageHinkleyOptions o;
  o.delta = 0.2;
  o.threshold = 1e9;
  PageHinkley chart(o);
  std::mt19937_64 rng(4);
  std::normal_distribution<double> normal(0.3, 1.0);
  std::vector<double> z;
  double m_up = 0, m_down = 0, min_up = 0, min_down = 0, sum = 0;
  for (int n = 1; n <= 3000; ++n) {
    z.push_back(normal(rng) + (n > 1500 ? 0.7 : 0.0));
    sum += z.back();
    const double mean = sum / n;  // zbar_n from its definition
    m_up += z.back() - mean - o.delta;
    m_down += mean - z.back() - o.delta;
    min_up = std::min(min_up, m_up);
    min_down = std::min(min_down, m_down);
    const DetectorEvent e = chart.Update(z.back(), Mark(n));
    ASSERT_NEAR(chart.state().upper, m_up - min_up, 1e-9 * (1 + n)) << n;
    ASSERT_NEAR(chart.state().lower, m_down - min_down, 1e-9 * (1 + n)) << n;
    ASSERT_DOUBLE_EQ(e.statistic, std::max(chart.state().upper, chart.state().lower));
  }
}

TEST(ChartsPageHinkleyTest, IgnoresAConstantOffsetButCatchesAStep) {
  PageHinkleyOptions o;
  o.delta = 0.25;
  o.threshold = 8.0;
  PageHinkley chart(o);
  // A constant offset of 3 from the start is the running mean, not a change.
  for (int i = 0; i < 500; ++i) ASSERT_FALSE(chart.Update(3.0, Mark(i)).raised) << i;
  DetectorEvent e;
  int i = 500;
  for (; i < 600 && !e.raised; ++i) e = chart.Update(5.0, Mark(i));
  ASSERT_TRUE(e.raised);
  EXPECT_EQ(e.direction, Direction::kUp);
  EXPECT_EQ(e.onset_seq, 500);
  EXPECT_GT(e.shift, 1.0);  // relative to a running mean that has begun to absorb the step
}

TEST(ChartsPageHinkleyTest, ValidateNamesTheBadField) {
  PageHinkleyOptions o;
  o.delta = -1;
  EXPECT_NE(o.Validate().message().find("delta"), std::string::npos);
  o = PageHinkleyOptions();
  o.threshold = 0;
  EXPECT_NE(o.Validate().message().find("threshold"), std::string::npos);
}

}  // namespace
}  // namespace bayline::est
