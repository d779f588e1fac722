#include "estimators/detect/glr.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <random>
#include <vector>

#include "tests/unit/estimators/detect/test_util.h"

namespace bayline::est {
namespace {

using testing::Mark;

// max over the last min(W, n) change points of S_j^2 / (2 j), summing each window afresh.
double BruteForce(const std::vector<double>& z, std::size_t w, Direction d) {
  double best = 0.0, s = 0.0;
  for (std::size_t j = 1; j <= std::min(w, z.size()); ++j) {
    s += z[z.size() - j];
    double v = s;
    if (d == Direction::kUp) v = std::max(v, 0.0);
    if (d == Direction::kDown) v = std::min(v, 0.0);
    best = std::max(best, v * v / (2.0 * static_cast<double>(j)));
  }
  return best;
}

TEST(ChartsGlrTest, MatchesBruteForceOnALongStreamInEveryDirection) {
  for (Direction d : {Direction::kBoth, Direction::kUp, Direction::kDown}) {
    GlrOptions o;
    o.window = 37;
    o.threshold = 1e9;
    o.direction = d;
    Glr chart(o);
    std::mt19937_64 rng(8);
    std::normal_distribution<double> normal(0.0, 1.0);
    std::vector<double> z;
    // 1e5 observations with a slow drift: the prefix sums would grow without re-basing.
    for (int i = 0; i < 100000; ++i) {
      z.push_back(normal(rng) + 2e-4 * i);
      const double g = chart.Update(z.back(), Mark(i)).statistic;
      if (i % 997 == 0 || i > 99900) {
        const double ref = BruteForce(z, 37, d);
        ASSERT_NEAR(g, ref, 1e-9 * (1.0 + ref)) << i;
      }
    }
  }
}

TEST(ChartsGlrTest, AlarmReportsTheMaximisingWindow) {
  GlrOptions o;
  o.window = 50;
  o.threshold = 10.0;
  Glr chart(o);
  for (int i = 0; i < 60; ++i) chart.Update(0.0, Mark(i));
  // Step of -2 from 60: g_j = (2j)^2 / (2j) = 2j on the shifted part, crossing 10 at j = 6.
  DetectorEvent e;
  int i = 60;
  for (; i < 80 && !e.raised; ++i) e = chart.Update(-2.0, Mark(i));
  ASSERT_TRUE(e.raised);
  EXPECT_EQ(i - 1, 65);
  EXPECT_EQ(e.direction, Direction::kDown);
  EXPECT_EQ(e.onset_seq, 60);
  EXPECT_DOUBLE_EQ(e.shift, -2.0);
  EXPECT_DOUBLE_EQ(e.statistic, 12.0);
}

TEST(ChartsGlrTest, RestoreRejectsAStateLongerThanTheWindow) {
  GlrOptions o;
  o.window = 3;
  Glr chart(o);
  Glr::State s;
  s.prefix = {0, 1, 2, 3, 4};
  s.seq = {1, 2, 3, 4};
  s.time = {1, 2, 3, 4};
  EXPECT_EQ(chart.Restore(s).code(), ErrorCode::kInvalidState);
  s.prefix = {0, 1};
  s.seq = {1};
  s.time = {1};
  EXPECT_TRUE(chart.Restore(s).ok());
  EXPECT_DOUBLE_EQ(chart.Update(1.0, Mark(2)).statistic, 1.0);  // S_2 = 2: 4/4
}

}  // namespace
}  // namespace bayline::est
