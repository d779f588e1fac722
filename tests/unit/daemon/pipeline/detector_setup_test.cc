// CalibrateDetector for bocpd: raw settings stay raw; without a threshold the threshold is
// calibrated (estimators/detect/calibration.h CalibrateBocpd, whose ARL accuracy is tested in
// tests/unit/estimators/detect/bocpd_calibration_test.cc) and memoised per process; ValidateConfig
// caps arl0 for a simulated bocpd calibration.
#include "daemon/pipeline/detector_setup.h"

#include <gtest/gtest.h>

#include "daemon/pipeline/daemon_config.h"
#include "estimators/detect/calibration.h"
#include "tests/unit/daemon/pipeline/test_util.h"

namespace bayline::pipeline {
namespace {

bayline::v1::DetectorSpec Bocpd(double arl0, double shift) {
  bayline::v1::DetectorSpec spec;
  spec.set_kind("bocpd");
  spec.set_arl0(arl0);
  spec.set_shift(shift);
  return spec;
}

TEST(DetectorSetupTest, BocpdRawThresholdKeepsTheOldDefaults) {
  auto spec = Bocpd(400, 1.0);
  spec.set_threshold(0.6);
  DetectorSetup d;
  ASSERT_TRUE(CalibrateDetector(spec, "d", &d).ok());
  EXPECT_EQ(d.bocpd.threshold, 0.6);
  EXPECT_DOUBLE_EQ(d.bocpd.hazard, 1.0 / 400);
  EXPECT_EQ(d.bocpd.window, 10);
}

TEST(DetectorSetupTest, BocpdIsCalibratedFromArl0AndShiftAndMemoised) {
  auto spec = Bocpd(60, 1.5);
  spec.set_holdoff(4);
  DetectorSetup d;
  ASSERT_TRUE(CalibrateDetector(spec, "d", &d).ok());
  EXPECT_DOUBLE_EQ(d.bocpd.hazard, 1.0 / 60);
  EXPECT_EQ(d.bocpd.window, est::BocpdWindowForShift({60, 1.5}));
  EXPECT_EQ(d.bocpd.holdoff, 4);
  EXPECT_GT(d.bocpd.threshold, 0.0);
  EXPECT_LT(d.bocpd.threshold, 1.0);
  // The library's calibration with the same budget gives the same threshold (the memo stores
  // exactly that), and a second build reads the memo.
  est::Bocpd::Options direct;
  direct.window = 0;
  ASSERT_TRUE(est::CalibrateBocpd({60, 1.5}, &direct,
                                  est::SimulationBudget{.runs = BocpdSimulationRuns(60)})
                  .ok());
  EXPECT_EQ(direct.threshold, d.bocpd.threshold);
  DetectorSetup again;
  ASSERT_TRUE(CalibrateDetector(spec, "d", &again).ok());
  EXPECT_EQ(again.bocpd.threshold, d.bocpd.threshold);
  // A raw hazard and recent are kept; the threshold is solved for them.
  spec.set_hazard(0.05);
  spec.set_recent(6);
  DetectorSetup raw_hazard;
  ASSERT_TRUE(CalibrateDetector(spec, "d", &raw_hazard).ok());
  EXPECT_EQ(raw_hazard.bocpd.hazard, 0.05);
  EXPECT_EQ(raw_hazard.bocpd.window, 6);
  EXPECT_NE(raw_hazard.bocpd.threshold, d.bocpd.threshold);
}

TEST(DetectorSetupTest, BocpdSimulationRunsAreBoundedInObservations) {
  EXPECT_EQ(BocpdSimulationRuns(200), kSimulationRuns);
  EXPECT_EQ(BocpdSimulationRuns(2000), 500);
  EXPECT_EQ(BocpdSimulationRuns(1e4), kBocpdMinSimulationRuns);
}

TEST(DetectorSetupTest, ValidateConfigCapsArl0ForACalibratedBocpd) {
  const auto over = testing::ParseConfig(
      R"(rules { match: "**" spec { detectors { kind: "bocpd" arl0: 100000 } } })");
  const est::Status s = ValidateConfig(over);
  ASSERT_FALSE(s.ok());
  EXPECT_EQ(s.message().rfind("rules[0].spec.detectors[0].arl0:", 0), 0u) << s.message();
  const auto raw = testing::ParseConfig(
      R"(rules { match: "**" spec { detectors { kind: "bocpd" arl0: 100000 threshold: 0.9 } } })");
  EXPECT_TRUE(ValidateConfig(raw).ok()) << ValidateConfig(raw).ToString();
}

}  // namespace
}  // namespace bayline::pipeline
