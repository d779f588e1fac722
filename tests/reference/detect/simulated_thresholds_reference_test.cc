// Page-Hinkley and GLR thresholds are calibrated by simulation (calibration.h). Check: the
// in-control ARL achieved by the calibrated chart, measured by an independent simulation (another
// seed), is within 10% of the target (no outside source: the calibration's own contract).
#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <random>

#include "estimators/detect/calibration.h"
#include "estimators/detect/page_hinkley.h"

namespace bayline::est {
namespace {

SimulationBudget Budget(int runs, std::uint64_t seed) {
  SimulationBudget b;
  b.runs = runs;
  b.seed = seed;
  return b;
}

TEST(ChartsSimulatedThresholdTest, PageHinkleyAchievesItsTarget) {
  for (double shift : {0.5, 1.5}) {
    PageHinkleyOptions o;
    ASSERT_TRUE(CalibratePageHinkley({500, shift}, &o, Budget(4000, 101)).ok());
    const double arl = SimulatePageHinkleyArl(o, 0.0, Budget(4000, 202));
    std::printf("page_hinkley D=%g: delta %g threshold %.4f, simulated ARL0 %.1f (target 500)\n",
                shift, o.delta, o.threshold, arl);
    EXPECT_NEAR(arl, 500, 50) << "delta " << o.delta << " threshold " << o.threshold;
    // It catches the design shift arriving after 100 in-control observations far sooner than a
    // false alarm (a shift present from the start is absorbed by the running mean, by design).
    std::mt19937_64 rng(303);
    std::normal_distribution<double> normal(0.0, 1.0);
    double delay = 0;
    int runs = 0;
    for (int r = 0; r < 500; ++r) {
      PageHinkley chart(o);
      bool early = false;
      for (int i = 0; i < 100 && !early; ++i)
        early = chart.Update(normal(rng), ObservationMark{}).raised;
      if (early) continue;
      int t = 1;
      while (!chart.Update(normal(rng) + shift, ObservationMark{}).raised) ++t;
      delay += t;
      ++runs;
    }
    std::printf("page_hinkley D=%g: mean delay %.1f after a change at observation 100\n", shift,
                delay / runs);
    EXPECT_LT(delay / runs, 0.2 * 500) << "mean delay at the design shift " << shift;
  }
}

TEST(ChartsSimulatedThresholdTest, GlrAchievesItsTargetForFixedAndAutomaticWindows) {
  GlrOptions fixed;
  fixed.window = 50;
  ASSERT_TRUE(CalibrateGlr({500, 1.0}, &fixed, Budget(4000, 104)).ok());
  const double arl_fixed = SimulateGlrArl(fixed, 0.0, Budget(4000, 205));
  std::printf("glr W=50: threshold %.4f, simulated ARL0 %.1f (target 500)\n", fixed.threshold,
              arl_fixed);
  EXPECT_NEAR(arl_fixed, 500, 50) << fixed.threshold;
  GlrOptions automatic;
  automatic.window = 0;
  automatic.direction = Direction::kUp;
  ASSERT_TRUE(CalibrateGlr({200, 0.5}, &automatic, Budget(4000, 106)).ok());
  EXPECT_EQ(automatic.window, std::lround(8 * std::log(200.0) / 0.25));
  const double arl_auto = SimulateGlrArl(automatic, 0.0, Budget(4000, 207));
  std::printf("glr up, W=%lld (auto): threshold %.4f, simulated ARL0 %.1f (target 200)\n",
              static_cast<long long>(automatic.window), automatic.threshold, arl_auto);
  EXPECT_NEAR(arl_auto, 200, 20) << automatic.threshold;
}

}  // namespace
}  // namespace bayline::est
