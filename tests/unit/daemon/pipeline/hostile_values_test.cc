// Accepted values must leave a restorable state: every channel fed extreme but finite values
// (y or regressors near 1e154, weights 1e300 / 1e-300, an exact line then a far outlier, huge
// trials and exposures) under every model family, estimator and detector is either refused at
// input (nothing changes) or saved and restored exactly, and a channel that cannot be restored
// is set aside alone.
#include <gtest/gtest.h>

#include <cmath>
#include <fstream>
#include <optional>
#include <sstream>
#include <string>
#include <vector>

#include "tests/unit/daemon/pipeline/test_util.h"

namespace bayline::pipeline {
namespace {

using testing::kArrival;
using testing::RecordingSink;
using testing::SnapshotBytes;

// "auto/**" falls to the last rule: model auto (gaussian here, no regressors), every estimator.
const std::vector<std::string> kFamilies = {
    "auto",      "linear",  "robust",   "extended",    "drift", "gaussian", "forget",
    "lognormal", "poisson", "binomial", "exponential", "gamma", "logistic", "poisson_regression"};

bool HasRegressors(const std::string& family) {
  return family == "linear" || family == "robust" || family == "extended" || family == "drift" ||
         family == "logistic" || family == "poisson_regression";
}

struct Value {
  double y;
  double x = 1.0;
  double weight = 1.0;
  double trials = 0.0;    // 0: not sent
  double exposure = 0.0;  // 0: not sent
};

// A plain start that identifies every estimator: counts 0..6 (valid for every family once shifted
// into its domain by the caller), regressor 1..7.
std::vector<Value> PlainStart(int n) {
  std::vector<Value> out;
  for (int i = 0; i < n; ++i) out.push_back({double(1 + (i * 3) % 7), double(1 + i % 7)});
  return out;
}

struct HostileCase {
  std::string name;
  std::vector<Value> values;
};

std::vector<HostileCase> HostileCases() {
  std::vector<HostileCase> cases;
  auto add = [&](std::string name, std::vector<Value> tail, int plain = 12) {
    std::vector<Value> v = PlainStart(plain);
    v.insert(v.end(), tail.begin(), tail.end());
    for (const Value& p : PlainStart(6)) v.push_back(p);
    cases.push_back({std::move(name), std::move(v)});
  };
  add("huge_y", {{1e154}, {2.0}, {1e154}, {1e154}, {3.0}});
  add("huge_y_first", {{1e154}, {1e154}}, 0);
  add("huge_x", {{2.0, 1e154}, {3.0, 2.0}, {1e154, 1e154}, {4.0, -1e154}});
  add("huge_x_first", {{2.0, 1e154}, {3.0, 1e154}, {4.0, 2.0}}, 0);
  add("near_max", {{1e300}, {1.7e308}, {1.0, 1e300}});
  add("heavy_weight", {{2.0, 1.0, 1e300}, {3.0, 2.0, 1e300}, {5.0, 3.0, 1e300}});
  add("light_weight", {{2.0, 1.0, 1e-300}, {3.0, 2.0, 1e-300}, {5.0, 3.0, 1e-300}});
  add("weights_mixed",
      {{2.0, 1.0, 1e300}, {3.0, 2.0, 1e-300}, {4.0, 3.0, 1e300}, {9.0, 4.0, 1e-300}});
  add("huge_y_heavy", {{1e154, 1.0, 1e300}, {2.0, 1e154, 1e300}, {1e154, 1e154, 1e-300}});
  add("tiny_y", {{1e-300}, {2e-300}, {4.9e-324}, {1e-310}});
  add("huge_trials", {{5e299, 1.0, 1.0, 1e300}, {1e154, 2.0, 1.0, 1e154}, {1.0, 3.0, 1.0, 1e300}});
  add("huge_exposure",
      {{3.0, 1.0, 1.0, 0.0, 1e300}, {3.0, 2.0, 1.0, 0.0, 1e-300}, {1e154, 3.0, 1.0, 0.0, 1e-300}});
  // An exact line (y = 2 + 3x; constant 5 without regressors), then a far outlier.
  std::vector<Value> line;
  for (int i = 0; i < 12; ++i) line.push_back({2.0 + 3.0 * (1 + i % 5), double(1 + i % 5)});
  std::vector<Value> constant;
  for (int i = 0; i < 12; ++i) constant.push_back({5.0});
  for (auto* v : {&line, &constant}) {
    v->push_back({1e150, 3.0});
    v->push_back({5.0, 1.0});
    v->push_back({1e154, 2.0});
  }
  cases.push_back({"exact_line_then_outlier", line});
  cases.push_back({"constant_then_outlier", constant});
  return cases;
}

bayline::v1::Observation ToObservation(const std::string& channel, uint64_t seq, const Value& v,
                                       bool regressors) {
  bayline::v1::Observation o;
  o.set_channel(channel);
  o.set_seq(seq);
  o.set_time_ns(1'700'000'000'000'000'000 + int64_t(seq) * 1'000'000'000);
  o.set_y(v.y);
  if (regressors) o.add_x(v.x);
  if (v.weight != 1.0) o.set_weight(v.weight);
  if (v.trials != 0.0) o.set_trials(v.trials);
  if (v.exposure != 0.0) o.set_exposure(v.exposure);
  return o;
}

// tests/data/every_family.conf: one rule per model family and estimator variant.
bayline::v1::DaemonConfig HostileConfig() {
  std::ifstream in(std::string(BAYLINE_SOURCE_DIR) + "/tests/data/every_family.conf");
  std::stringstream text;
  text << in.rdbuf();
  return testing::ParseConfig(text.str());
}

// Feeds every hostile case to its own channel of every family, and a plain channel per family.
void FeedAll(Pipeline& p, RecordingSink& sink, std::vector<std::string>* normal_channels) {
  for (const std::string& family : kFamilies) {
    const bool regressors = HasRegressors(family);
    for (const HostileCase& c : HostileCases()) {
      const std::string channel = family + "/" + c.name;
      uint64_t seq = 0;
      for (const Value& v : c.values)
        p.Process(ToObservation(channel, ++seq, v, regressors), kArrival, sink);
    }
    const std::string normal = family + "/normal";
    uint64_t seq = 0;
    for (const Value& v : PlainStart(40))
      p.Process(ToObservation(normal, ++seq, v, regressors), kArrival, sink);
    normal_channels->push_back(normal);
  }
}

TEST(HostileValuesTest, EveryAcceptedStateRestoresExactly) {
  const auto config = HostileConfig();
  ASSERT_TRUE(ValidateConfig(config).ok()) << ValidateConfig(config).ToString();
  Pipeline source(config);
  RecordingSink sink;
  std::vector<std::string> normal;
  FeedAll(source, sink, &normal);
  ASSERT_GT(source.counters().accepted, 0u);

  bayline::v1::Snapshot saved;
  source.SaveChannels(&saved);
  bayline::v1::Snapshot reread;
  ASSERT_TRUE(reread.ParseFromString(saved.SerializeAsString()));
  Pipeline target(config);
  std::vector<std::string> reset, not_restored;
  const est::Status s = target.RestoreChannels(reread, &reset, &not_restored);
  ASSERT_TRUE(s.ok()) << s.ToString();
  EXPECT_TRUE(reset.empty());
  for (const std::string& why : not_restored) ADD_FAILURE() << why;
  EXPECT_EQ(target.counters().channels_not_restored, not_restored.size());

  for (const auto& c : saved.channels()) {
    const auto before = source.Ask(c.name());
    const auto after = target.Ask(c.name());
    ASSERT_TRUE(before.has_value());
    if (!after.has_value()) continue;  // reported above
    EXPECT_EQ(after->SerializeAsString(), before->SerializeAsString()) << c.name();
  }
  for (const std::string& name : normal) {
    ASSERT_TRUE(target.Ask(name).has_value()) << name;
    EXPECT_EQ(target.Ask(name)->SerializeAsString(), source.Ask(name)->SerializeAsString()) << name;
  }
  EXPECT_EQ(SnapshotBytes(target).size(), SnapshotBytes(source).size());
}

// A rejected observation changes nothing: the channel's saved state is the same before and after.
TEST(HostileValuesTest, RefusedObservationChangesNothing) {
  const auto config = HostileConfig();
  Pipeline p(config);
  RecordingSink sink;
  for (const std::string& family : kFamilies) {
    const bool regressors = HasRegressors(family);
    const std::string channel = family + "/probe";
    uint64_t seq = 0;
    for (const Value& v : PlainStart(12))
      p.Process(ToObservation(channel, ++seq, v, regressors), kArrival, sink);
    for (const HostileCase& c : HostileCases()) {
      for (const Value& v : c.values) {
        const std::string before = SnapshotBytes(p);
        const uint64_t rejected = p.counters().rejected_total;
        p.Process(ToObservation(channel, ++seq, v, regressors), kArrival, sink);
        if (p.counters().rejected_total != rejected) {
          EXPECT_EQ(SnapshotBytes(p), before) << channel << " " << c.name << " y=" << v.y;
        }
      }
    }
  }
}

// One channel whose saved state fails its estimator's invariants is set aside on its own: it is
// named with the reason and counted, and every other channel is restored.
TEST(HostileValuesTest, UnrestorableChannelIsSetAsideAlone) {
  const auto config = HostileConfig();
  Pipeline source(config);
  RecordingSink sink;
  std::vector<std::string> normal;
  FeedAll(source, sink, &normal);
  bayline::v1::Snapshot saved;
  source.SaveChannels(&saved);
  const std::string victim = "gaussian/normal";
  int victim_index = -1;
  for (int i = 0; i < saved.channels_size(); ++i) {
    if (saved.channels(i).name() == victim) victim_index = i;
  }
  ASSERT_GE(victim_index, 0);
  auto* values = saved.mutable_channels(victim_index)->mutable_components(0)->mutable_values();
  for (int i = 0; i < values->size(); ++i) values->Set(i, -std::numeric_limits<double>::infinity());

  Pipeline target(config);
  std::vector<std::string> not_restored;
  ASSERT_TRUE(target.RestoreChannels(saved, nullptr, &not_restored).ok());
  ASSERT_EQ(not_restored.size(), 1u);
  EXPECT_NE(not_restored[0].find(victim), std::string::npos) << not_restored[0];
  EXPECT_EQ(target.counters().channels_not_restored, 1u);
  EXPECT_FALSE(target.Ask(victim).has_value());
  EXPECT_EQ(target.counters().channels, uint64_t(saved.channels_size() - 1));
  for (const auto& c : saved.channels()) {
    if (c.name() == victim) continue;
    ASSERT_TRUE(target.Ask(c.name()).has_value()) << c.name();
    EXPECT_EQ(target.Ask(c.name())->SerializeAsString(), source.Ask(c.name())->SerializeAsString());
  }
}

}  // namespace
}  // namespace bayline::pipeline
