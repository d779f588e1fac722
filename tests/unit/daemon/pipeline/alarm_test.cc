#include <gtest/gtest.h>

#include <random>
#include <string>

#include "tests/unit/daemon/pipeline/test_util.h"

namespace bayline::pipeline {
namespace {

using bayline::v1::Publication;
using testing::kArrival;
using testing::Obs;
using testing::RecordingSink;

// The first raised alarm, or nullptr.
const bayline::v1::Alarm* FirstRaised(const RecordingSink& sink) {
  for (const auto* r : sink.OfKind(Publication::kAlarm)) {
    if (r->publication.alarm().state() == "raised") return &r->publication.alarm();
  }
  return nullptr;
}

TEST(AlarmTest, StepInGaussianMeanRaisesCusumAlarmWithItsFields) {
  Pipeline p(DefaultConfig());
  RecordingSink sink;
  std::mt19937_64 rng(2026);
  std::normal_distribution<double> noise(0.0, 0.5);
  const uint64_t change_at = 300;
  double y_at_alarm = 0;
  for (uint64_t i = 1; i <= 400; ++i) {
    const double y = -18.0 + (i > change_at ? 1.5 : 0.0) + noise(rng);  // +3 sd step
    p.Process(Obs("coldstore/freezer2/temperature", i, y), kArrival, sink);
    if (FirstRaised(sink) != nullptr && y_at_alarm == 0) y_at_alarm = y;
  }
  const auto* a = FirstRaised(sink);
  ASSERT_NE(a, nullptr);
  EXPECT_GT(a->seq(), change_at);
  EXPECT_LE(a->seq(), change_at + 15);
  EXPECT_EQ(a->channel(), "coldstore/freezer2/temperature");
  EXPECT_EQ(a->detector(), "cusum");
  EXPECT_EQ(a->watched(), "ls");
  EXPECT_EQ(a->direction(), "up");
  EXPECT_GT(a->statistic(), a->threshold());
  EXPECT_GT(a->threshold(), 0.0);
  EXPECT_GT(a->onset_seq(), change_at - 10);
  EXPECT_LE(a->onset_seq(), a->seq());
  EXPECT_GT(a->onset_time_ns(), 0);
  EXPECT_GT(a->shift(), 0.5);
  EXPECT_EQ(a->trigger_y(), y_at_alarm);
  // The alarm is published before the estimates of the same observation.
  for (std::size_t i = 0; i < sink.records.size(); ++i) {
    if (&sink.records[i].publication.alarm() == a) {
      EXPECT_EQ(sink.records[i].topic, "alarm/coldstore/freezer2/temperature");
      ASSERT_LT(i + 1, sink.records.size());
      EXPECT_EQ(sink.records[i + 1].publication.estimate().seq(), a->seq());
    }
  }
  const auto report = p.Ask("coldstore/freezer2/temperature");
  ASSERT_TRUE(report.has_value());
  ASSERT_EQ(report->detectors_size(), 1);
  EXPECT_GE(report->detectors(0).alarms_raised(), 1u);
  EXPECT_EQ(report->detectors(0).last_alarm().state(), "raised");
}

TEST(AlarmTest, GainChangeOnLinearChannelRaisesAlarmAndInflates) {
  auto config = testing::ParseConfig(R"(
    rules { name: "calibration" match: "**" spec {
      model: "linear" regressors: "reference"
      detectors { kind: "cusum" arl0: 1000 inflate_on_alarm: 1000 } } })");
  ASSERT_TRUE(ValidateConfig(config).ok()) << ValidateConfig(config).ToString();
  Pipeline p(config);
  RecordingSink sink;
  std::mt19937_64 rng(99);
  std::uniform_real_distribution<double> ref(-20.0, 5.0);
  std::normal_distribution<double> noise(0.0, 0.05);
  const uint64_t change_at = 250;
  for (uint64_t i = 1; i <= 400; ++i) {
    const double x = ref(rng);
    const double gain = i > change_at ? 1.03 : 1.0;  // the probe's gain drifts by 3%
    p.Process(Obs("coldstore/probe7/calibration", i, 0.1 + gain * x + noise(rng), {x}), kArrival,
              sink);
  }
  const auto* a = FirstRaised(sink);
  ASSERT_NE(a, nullptr);
  EXPECT_GT(a->seq(), change_at);
  EXPECT_LE(a->seq(), change_at + 20);
  EXPECT_EQ(a->watched(), "ls");
  EXPECT_GT(a->statistic(), a->threshold());
  // After the inflation the ls gain re-converges to the new value.
  const auto report = p.Ask("coldstore/probe7/calibration");
  ASSERT_TRUE(report.has_value());
  const auto& ls = report->estimates(0);
  ASSERT_EQ(ls.estimator(), "ls");
  ASSERT_EQ(ls.names(1), "reference");
  EXPECT_NEAR(ls.value(1), 1.03, 0.005);
}

}  // namespace
}  // namespace bayline::pipeline
