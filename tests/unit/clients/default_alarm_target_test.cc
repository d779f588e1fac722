// A file replayed without flags alarms as the daemon's default rule does live: both detectors
// resolve to the same calibrated CUSUM (one default arl0, est::kDefaultArl0).
#include <gtest/gtest.h>

#include "clients/cli/replay_spec.h"
#include "daemon/pipeline/daemon_config.h"
#include "daemon/pipeline/detector_setup.h"

namespace bayline::cli {
namespace {

pipeline::DetectorSetup Calibrated(const bayline::v1::DetectorSpec& spec) {
  pipeline::DetectorSetup setup;
  const est::Status status = pipeline::CalibrateDetector(spec, "detector", &setup);
  EXPECT_TRUE(status.ok()) << status.ToString();
  return setup;
}

TEST(DefaultAlarmTargetTest, ReplayWithoutFlagsCalibratesLikeTheDaemonsDefaultRule) {
  const bayline::v1::DaemonConfig replay = ConfigFromFlags(ReplaySpecFlags{});
  const bayline::v1::DaemonConfig daemon = pipeline::DefaultConfig();
  ASSERT_EQ(replay.rules(0).spec().detectors_size(), 1);
  ASSERT_EQ(daemon.rules(0).spec().detectors_size(), 1);
  const pipeline::DetectorSetup offline = Calibrated(replay.rules(0).spec().detectors(0));
  const pipeline::DetectorSetup live = Calibrated(daemon.rules(0).spec().detectors(0));
  EXPECT_EQ(offline.kind, pipeline::DetectorKind::kCusum);
  EXPECT_EQ(live.kind, pipeline::DetectorKind::kCusum);
  EXPECT_EQ(offline.cusum.k, live.cusum.k);
  EXPECT_EQ(offline.cusum.h, live.cusum.h);
  EXPECT_EQ(offline.cusum.head_start, live.cusum.head_start);
  EXPECT_EQ(live.cusum.k, 0.5);  // k = shift / 2 for the default shift of 1 sd
}

}  // namespace
}  // namespace bayline::cli
