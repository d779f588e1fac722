// CalibrateBocpd at arl0 = 1000 with the daemon's budget (1000 runs, default seed: what
// pipeline::BocpdSimulationRuns gives at this arl0). Check (no outside source: the calibration's
// own contract): the in-control ARL measured by an independent simulation (another seed, 1200
// runs; sd of the run lengths about their mean, so the 95 % CI half-width is about 6 %, asserted
// from the sample sd) is within +-15 % of 1000; the calibration's own standard error is about
// 3.2 %, so the tolerance is about 3.4 combined standard errors. A 1 sd step after 100 in-control
// observations is caught far sooner. About 10^6 bocpd updates for the calibration and 1.2 * 10^6
// for the measurement: about a minute of CPU (2.5 minutes wall on a loaded 2-core machine), hence
// a reference test. Measured: ARL0 975.9 +- 55.1 (95 %), delay 15.2 at 1 sd.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>

#include "estimators/detect/calibration.h"

namespace bayline::est {
namespace {

TEST(BocpdCalibrationReferenceTest, InControlArlAtArl0Thousand) {
  Bocpd::Options o;
  o.window = 0;
  SimulationBudget calibration;
  calibration.runs = 1000;
  ASSERT_TRUE(CalibrateBocpd({1000, 1.0}, &o, calibration).ok());
  SimulationBudget check;
  check.runs = 1200;
  check.seed = 4242;
  double se = 0;
  const double arl0 = SimulateBocpdDelay(o, 0.0, 0, check, &se);
  check.runs = 300;
  const double delay = SimulateBocpdDelay(o, 1.0, 100, check);
  std::printf(
      "bocpd arl0 1000 D 1: hazard %g window %d threshold %.4f; simulated ARL0 %.1f "
      "(1200 runs, 95%% CI +-%.1f), delay at 1 sd after 100 obs %.1f\n",
      o.hazard, o.window, o.threshold, arl0, 1.96 * se, delay);
  EXPECT_LT(1.96 * se, 0.07 * 1000);
  EXPECT_NEAR(arl0, 1000, 0.15 * 1000);
  EXPECT_LT(delay, 0.1 * 1000);
}

}  // namespace
}  // namespace bayline::est
