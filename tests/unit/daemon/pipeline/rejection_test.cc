// Rejections on the per-observation path that depend on how Process finds channels: names are
// fully validated only when not registered, estimators are backed up only for rollback, and a new
// channel is registered only once its first observation is absorbed.
#include <gtest/gtest.h>

#include <string>
#include <vector>

#include "tests/unit/daemon/pipeline/test_util.h"

namespace bayline::pipeline {
namespace {

using bayline::v1::Publication;
using testing::kArrival;
using testing::Obs;
using testing::ParseConfig;
using testing::RecordingSink;
using testing::SnapshotBytes;

// An observation that ls and map absorb but ml cannot: its weight squared overflows ml's sum of
// squared weights (estimators/ml/gaussian_ml.cc), while ls and map scale by the weight itself.
bayline::v1::Observation HeavyObs(const std::string& channel, uint64_t seq) {
  bayline::v1::Observation o = Obs(channel, seq, 5.0);
  o.set_weight(1e200);
  return o;
}

bayline::v1::DaemonConfig Config(const std::string& estimators) {
  return ParseConfig(R"(rules { name: "r" match: "**" spec { model: "gaussian" )" + estimators +
                     R"( detectors { kind: "cusum" arl0: 500 } } })");
}

TEST(RejectionTest, HeavyObservationIsAbsorbedByLsAndMapAlone) {
  // The premise of the rollback tests below: the failure comes from ml, after ls (and map) have
  // already been updated, so only rolling them back keeps the state unchanged.
  for (const char* kinds : {R"(estimators: "ls")", R"(estimators: "map")"}) {
    Pipeline p(Config(kinds));
    RecordingSink sink;
    for (uint64_t i = 1; i <= 5; ++i)
      p.Process(Obs("site/a", i, 1.0 + 0.1 * double(i)), kArrival, sink);
    sink.Clear();
    p.Process(HeavyObs("site/a", 6), kArrival, sink);
    EXPECT_TRUE(sink.OfKind(Publication::kInputError).empty()) << kinds;
    EXPECT_EQ(p.counters().accepted, 6u) << kinds;
  }
  Pipeline ml(Config(R"(estimators: "ml")"));
  RecordingSink sink;
  ml.Process(Obs("site/a", 1, 1.0), kArrival, sink);
  sink.Clear();
  ml.Process(HeavyObs("site/a", 2), kArrival, sink);
  ASSERT_EQ(sink.records.size(), 1u);
  EXPECT_EQ(sink.records[0].publication.input_error().reason(), "numerical_failure");
}

TEST(RejectionTest, NumericalFailureOfALaterEstimatorRollsBackTheEarlierOnes) {
  Pipeline p(Config(R"(estimators: "ls" estimators: "map" estimators: "ml")"));
  RecordingSink sink;
  for (uint64_t i = 1; i <= 8; ++i)
    p.Process(Obs("site/a", i, 1.0 + 0.1 * double(i % 3)), kArrival, sink);
  const std::string before = SnapshotBytes(p);
  sink.Clear();
  p.Process(HeavyObs("site/a", 9), kArrival, sink);
  ASSERT_EQ(sink.records.size(), 1u);
  EXPECT_EQ(sink.records[0].publication.input_error().reason(), "numerical_failure");
  EXPECT_EQ(SnapshotBytes(p), before);
  EXPECT_EQ(p.counters().accepted, 8u);

  // The channel continues exactly as if the heavy observation had never been sent.
  Pipeline q(Config(R"(estimators: "ls" estimators: "map" estimators: "ml")"));
  for (uint64_t i = 1; i <= 8; ++i)
    q.Process(Obs("site/a", i, 1.0 + 0.1 * double(i % 3)), kArrival, sink);
  for (uint64_t i = 9; i <= 12; ++i) {
    p.Process(Obs("site/a", i, 1.3), kArrival, sink);
    q.Process(Obs("site/a", i, 1.3), kArrival, sink);
  }
  EXPECT_EQ(SnapshotBytes(p), SnapshotBytes(q));
}

TEST(RejectionTest, NumericalFailureOnAFirstObservationCreatesNoChannel) {
  Pipeline p(Config(R"(estimators: "ls" estimators: "ml")"));
  RecordingSink sink;
  p.Process(HeavyObs("site/new", 1), kArrival, sink);
  ASSERT_EQ(sink.records.size(), 1u);
  EXPECT_EQ(sink.records[0].publication.input_error().reason(), "numerical_failure");
  EXPECT_EQ(p.counters().channels, 0u);
  EXPECT_FALSE(p.Ask("site/new").has_value());
  EXPECT_EQ(p.List("").channels_size(), 0);
  // The name is free: a good first observation creates the channel with one observation.
  p.Process(Obs("site/new", 2, 1.0), kArrival, sink);
  ASSERT_TRUE(p.Ask("site/new").has_value());
  EXPECT_EQ(p.Ask("site/new")->info().accepted(), 1u);
}

TEST(RejectionTest, RegisteredNameOverALoweredLengthLimitIsRefused) {
  Pipeline p(DefaultConfig());
  RecordingSink sink;
  const std::string long_name(40, 'n');
  p.Process(Obs(long_name, 1, 1.0), kArrival, sink);
  p.Process(Obs("short", 1, 1.0), kArrival, sink);
  ASSERT_EQ(p.counters().channels, 2u);
  auto lowered = DefaultConfig();
  lowered.mutable_limits()->set_max_channel_name_bytes(32);
  ASSERT_TRUE(p.Reconfigure(lowered, nullptr).ok());
  const std::string before = SnapshotBytes(p);
  sink.Clear();
  p.Process(Obs(long_name, 2, 1.0), kArrival, sink);
  ASSERT_EQ(sink.records.size(), 1u);
  EXPECT_EQ(sink.records[0].publication.input_error().reason(), "channel_name_too_long");
  EXPECT_EQ(SnapshotBytes(p), before);
  sink.Clear();
  p.Process(Obs("short", 2, 1.0), kArrival, sink);  // names within the limit are unaffected
  EXPECT_TRUE(sink.OfKind(Publication::kInputError).empty());
  EXPECT_EQ(p.Ask("short")->info().accepted(), 2u);
}

TEST(RejectionTest, UnregisteredInvalidNamesAreRefusedWithoutEchoingThem) {
  // A name that is not registered gets the full check (UTF-8, control characters); the refusal
  // does not echo the name (it may be unserializable) and creates nothing.
  Pipeline p(DefaultConfig());
  RecordingSink sink;
  p.Process(Obs("bad\xFF", 1, 1.0), kArrival, sink);
  p.Process(Obs("tab\there", 1, 1.0), kArrival, sink);
  ASSERT_EQ(sink.records.size(), 2u);
  for (const auto& r : sink.records) {
    EXPECT_EQ(r.topic, "input_error/");
    EXPECT_EQ(r.publication.input_error().reason(), "invalid_channel_name");
    EXPECT_TRUE(r.publication.input_error().channel().empty());
  }
  EXPECT_EQ(p.counters().channels, 0u);
  EXPECT_EQ(p.counters().rejected_by_reason.at("invalid_channel_name"), 2u);
}

}  // namespace
}  // namespace bayline::pipeline
