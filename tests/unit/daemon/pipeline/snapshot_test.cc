#include <gtest/gtest.h>

#include <cmath>
#include <random>
#include <string>
#include <vector>

#include "daemon/pipeline/packing.h"
#include "tests/unit/daemon/pipeline/test_util.h"

namespace bayline::pipeline {
namespace {

using testing::kArrival;
using testing::Obs;
using testing::RecordingSink;
using testing::SnapshotBytes;

// Rules exercising every detector kind and several model families, with a publish policy whose
// state matters (every_n 7, min_interval) and raw thresholds (no simulation at start-up).
bayline::v1::DaemonConfig RichConfig() {
  return testing::ParseConfig(R"(
    rules { name: "cal" match: "cal/**" spec {
      model: "linear" regressors: "reference"
      detectors { kind: "cusum" arl0: 200 inflate_on_alarm: 50 }
      detectors { kind: "recursive_cusum" window: 40 }
      detectors { kind: "recursive_cusum_sq" window: 30 }
      detectors { kind: "band" parameter: "reference" band_low: 0.9 band_high: 1.1 }
      publish { every_n: 7 } } }
    rules { name: "rw" match: "rw/**" spec {
      model: "linear" map_tracker: "random_walk" drift_variance: 1e-4
      detectors { kind: "ewma" lambda: 0.2 limit: 2.8 watch: "map" } } }
    rules { name: "temp" match: "temp/**" spec {
      model: "gaussian"
      detectors { kind: "ewma" arl0: 300 }
      detectors { kind: "page_hinkley" threshold: 8 watch: "ml" }
      detectors { kind: "glr" threshold: 6 window: 20 watch: "map" }
      detectors { kind: "bocpd" hazard: 0.01 threshold: 0.5 }
      publish { every_n: 3 min_interval_ms: 2 } } }
    rules { name: "doors" match: "doors/**" spec {
      model: "poisson" detectors { kind: "bocpd" threshold: 0.5 } detectors { kind: "cusum" watch: "map" } } }
    rules { name: "rest" match: "**" spec { model: "auto" detectors { kind: "cusum" } } })");
}

std::vector<bayline::v1::Observation> Stream(int n) {
  std::vector<bayline::v1::Observation> out;
  std::mt19937_64 rng(31337);
  std::normal_distribution<double> n01(0.0, 1.0);
  std::poisson_distribution<int> doors(3.0);
  uint64_t seq = 0;
  for (int i = 0; i < n; ++i) {
    ++seq;
    if (i % 17 == 5) ++seq;  // gaps
    const double step = i > n / 2 ? 2.0 : 0.0;
    const double x = 10 * n01(rng);
    out.push_back(Obs("cal/probe1", seq, 0.2 + (1.0 + 0.01 * step) * x + 0.1 * n01(rng), {x}));
    out.push_back(Obs("rw/scale", seq, 1 + 0.5 * x + 0.2 * n01(rng), {x}));
    out.push_back(Obs("temp/freezer", seq, -18 + step + n01(rng)));
    out.push_back(Obs("doors/dock2", seq, doors(rng) + (step > 0 ? 3 : 0)));
    out.push_back(Obs("misc/" + std::to_string(i % 3), seq, n01(rng)));
  }
  return out;
}

std::vector<std::string> Bytes(const RecordingSink& sink) {
  std::vector<std::string> out;
  for (const auto& r : sink.records)
    out.push_back(r.topic + "|" + r.publication.SerializeAsString());
  return out;
}

TEST(SnapshotTest, RestoreAndContinueIsByteIdenticalToUninterruptedRun) {
  const auto config = RichConfig();
  ASSERT_TRUE(ValidateConfig(config).ok()) << ValidateConfig(config).ToString();
  const auto stream = Stream(240);
  const std::size_t cut = stream.size() / 2;

  Pipeline whole(config);
  RecordingSink whole_sink;
  for (std::size_t i = 0; i < stream.size(); ++i) {
    if (i == cut) whole_sink.Clear();
    whole.Process(stream[i], kArrival, whole_sink);
  }
  ASSERT_GT(whole_sink.OfKind(bayline::v1::Publication::kAlarm).size(), 0u);

  Pipeline first(config);
  RecordingSink ignored;
  for (std::size_t i = 0; i < cut; ++i) first.Process(stream[i], kArrival, ignored);
  bayline::v1::Snapshot saved;
  first.SaveChannels(&saved);
  EXPECT_EQ(saved.format_version(), 1u);
  EXPECT_EQ(saved.config_digest(), ConfigDigest(config));
  bayline::v1::Snapshot reread;
  ASSERT_TRUE(reread.ParseFromString(saved.SerializeAsString()));

  Pipeline second(config);
  std::vector<std::string> reset;
  const est::Status s = second.RestoreChannels(reread, &reset);
  ASSERT_TRUE(s.ok()) << s.ToString();
  EXPECT_TRUE(reset.empty());
  EXPECT_EQ(SnapshotBytes(second), SnapshotBytes(first));
  RecordingSink second_sink;
  for (std::size_t i = cut; i < stream.size(); ++i)
    second.Process(stream[i], kArrival, second_sink);

  EXPECT_EQ(Bytes(second_sink), Bytes(whole_sink));
  EXPECT_EQ(SnapshotBytes(second), SnapshotBytes(whole));
}

// The daemon writes the workers' channels encoded one at a time and concatenated: that decodes to
// the very message SaveChannels fills, and the concatenation of two pipelines' encodings to the
// union of their channels.
TEST(SnapshotTest, AppendedEncodingsDecodeToTheSavedSnapshot) {
  const auto config = RichConfig();
  Pipeline left(config);
  Pipeline right(config);
  RecordingSink sink;
  const auto stream = Stream(30);
  for (const auto& o : stream) {  // each channel in one of them, as the daemon's workers hold them
    (o.channel() < "m" ? left : right).Process(o, kArrival, sink);
  }
  std::string encoded;
  const uint64_t left_channels = left.AppendSerializedChannels(&encoded);
  bayline::v1::Snapshot decoded;
  ASSERT_TRUE(decoded.ParseFromString(encoded));
  bayline::v1::Snapshot saved;
  left.SaveChannels(&saved);
  ASSERT_GT(left_channels, 0u);
  EXPECT_EQ(left_channels, uint64_t(saved.channels_size()));
  EXPECT_EQ(decoded.SerializeAsString(), saved.SerializeAsString());

  const uint64_t right_channels = right.AppendSerializedChannels(&encoded);
  ASSERT_TRUE(decoded.ParseFromString(encoded));
  ASSERT_EQ(uint64_t(decoded.channels_size()), left_channels + right_channels);
  Pipeline both(config);
  ASSERT_TRUE(both.RestoreChannels(decoded).ok());
  EXPECT_EQ(both.counters().channels, left_channels + right_channels);
}

// Section lengths from a damaged snapshot are refused before any conversion to an integer (found by
// fuzz_snapshot_restore under UBSan: a length of 4e227 reached a double-to-size_t cast).
TEST(SnapshotTest, SectionLengthsOutOfRangeAreRefused) {
  for (const double length : {4.02722e227, 1e20, 3.0, 2.5, -1.0, std::nan("")}) {
    const std::vector<double> values = {length, 7.0, 8.0};
    std::size_t pos = 0;
    std::span<const double> section;
    EXPECT_FALSE(NextSection(values, &pos, &section)) << length;
    EXPECT_EQ(pos, 0u);
  }
  const std::vector<double> values = {2.0, 7.0, 8.0};
  std::size_t pos = 0;
  std::span<const double> section;
  ASSERT_TRUE(NextSection(values, &pos, &section));
  EXPECT_EQ(pos, 3u);
  EXPECT_EQ(section.size(), 2u);
}

// A channel whose record does not restore is set aside alone (named, with the reason, and
// counted); the other channels of the snapshot are restored.
TEST(SnapshotTest, ChannelThatDoesNotUnpackIsSetAsideAlone) {
  const auto config = RichConfig();
  Pipeline source(config);
  RecordingSink sink;
  const auto stream = Stream(30);
  for (const auto& o : stream) source.Process(o, kArrival, sink);
  bayline::v1::Snapshot good;
  source.SaveChannels(&good);
  const auto n = static_cast<uint64_t>(good.channels_size());

  // Truncate one component of the last channel, drop a component, then name a wrong kind.
  bayline::v1::Snapshot truncated = good;
  auto* values = truncated.mutable_channels(truncated.channels_size() - 1)
                     ->mutable_components(0)
                     ->mutable_values();
  values->Truncate(values->size() - 2);
  bayline::v1::Snapshot missing = good;
  missing.mutable_channels(0)->mutable_components()->RemoveLast();
  bayline::v1::Snapshot wrong_kind = good;
  wrong_kind.mutable_channels(1)->mutable_components(0)->set_kind("map");
  const std::vector<std::pair<const bayline::v1::Snapshot*, int>> cases = {
      {&truncated, truncated.channels_size() - 1}, {&missing, 0}, {&wrong_kind, 1}};
  for (const auto& [snapshot, bad] : cases) {
    Pipeline target(config);
    target.Process(Obs("temp/other", 1, 3.0), kArrival, sink);
    std::vector<std::string> not_restored;
    const est::Status s = target.RestoreChannels(*snapshot, nullptr, &not_restored);
    ASSERT_TRUE(s.ok()) << s.ToString();
    const std::string& name = good.channels(bad).name();
    ASSERT_EQ(not_restored.size(), 1u) << name;
    EXPECT_NE(not_restored[0].find("\"" + name + "\""), std::string::npos) << not_restored[0];
    EXPECT_EQ(target.counters().channels_not_restored, 1u);
    EXPECT_EQ(target.counters().channels, n);  // temp/other and every channel but one
    EXPECT_FALSE(target.Ask(name).has_value());
    for (const auto& c : good.channels()) {
      if (c.name() == name) continue;
      EXPECT_TRUE(target.Ask(c.name()).has_value()) << c.name();
    }
  }

  Pipeline target(config);
  ASSERT_TRUE(target.RestoreChannels(good).ok());
  EXPECT_EQ(target.counters().channels, n);
  EXPECT_EQ(target.counters().channels_not_restored, 0u);
}

// A snapshot of another format is refused as a whole and changes nothing.
TEST(SnapshotTest, OtherFormatIsRefusedAndChangesNothing) {
  const auto config = RichConfig();
  Pipeline source(config);
  RecordingSink sink;
  for (const auto& o : Stream(10)) source.Process(o, kArrival, sink);
  bayline::v1::Snapshot other;
  source.SaveChannels(&other);
  other.set_format_version(2);
  Pipeline target(config);
  target.Process(Obs("temp/other", 1, 3.0), kArrival, sink);
  const std::string before = SnapshotBytes(target);
  EXPECT_EQ(target.RestoreChannels(other).code(), est::ErrorCode::kInvalidState);
  EXPECT_EQ(SnapshotBytes(target), before);
}

TEST(SnapshotTest, ChannelWhoseSpecChangedIsResetAndReported) {
  const auto config = RichConfig();
  Pipeline source(config);
  RecordingSink sink;
  for (const auto& o : Stream(20)) source.Process(o, kArrival, sink);
  bayline::v1::Snapshot saved;
  source.SaveChannels(&saved);

  auto changed = config;
  changed.mutable_rules(2)->mutable_spec()->mutable_detectors(0)->set_arl0(400);  // "temp"
  Pipeline target(changed);
  std::vector<std::string> reset;
  ASSERT_TRUE(target.RestoreChannels(saved, &reset).ok());
  EXPECT_EQ(reset, std::vector<std::string>{"temp/freezer"});
  EXPECT_FALSE(target.Ask("temp/freezer").has_value());
  ASSERT_TRUE(target.Ask("cal/probe1").has_value());
  EXPECT_EQ(target.Ask("cal/probe1")->info().accepted(),
            source.Ask("cal/probe1")->info().accepted());
}

}  // namespace
}  // namespace bayline::pipeline
