#include <gtest/gtest.h>

#include <string>
#include <vector>

#include "tests/unit/daemon/pipeline/test_util.h"

namespace bayline::pipeline {
namespace {

using testing::kArrival;
using testing::Obs;

const char* kTwoRules = R"(
  rules { name: "freezers" match: "site/freezer*" spec { model: "gaussian" detectors { kind: "cusum" arl0: 1000 } } }
  rules { name: "doors" match: "site/door*" spec { model: "poisson" } })";

TEST(ReconfigureTest, ResetsChannelWhoseSpecChangedAndKeepsOthers) {
  Pipeline p(testing::ParseConfig(kTwoRules));
  testing::RecordingSink sink;
  for (uint64_t i = 1; i <= 5; ++i) {
    p.Process(Obs("site/freezer1", i, -18.0 + 0.1 * double(i)), kArrival, sink);
    p.Process(Obs("site/door1", i, double(i % 2)), kArrival, sink);
  }
  auto changed = testing::ParseConfig(kTwoRules);
  changed.mutable_rules(0)->mutable_spec()->mutable_detectors(0)->set_arl0(2000);
  changed.mutable_rules(1)->set_name("dock-doors");  // renamed, same spec: kept
  std::vector<std::string> reset;
  ASSERT_TRUE(p.Reconfigure(changed, &reset).ok());
  EXPECT_EQ(reset, std::vector<std::string>{"site/freezer1"});
  EXPECT_FALSE(p.Ask("site/freezer1").has_value());
  const auto door = p.Ask("site/door1");
  ASSERT_TRUE(door.has_value());
  EXPECT_EQ(door->info().accepted(), 5u);
  EXPECT_EQ(door->info().rule(), "dock-doors");

  // The reset channel restarts from its (new) rule.
  p.Process(Obs("site/freezer1", 6, -17.0), kArrival, sink);
  EXPECT_EQ(p.Ask("site/freezer1")->info().accepted(), 1u);
}

TEST(ReconfigureTest, InvalidConfigChangesNothing) {
  Pipeline p(testing::ParseConfig(kTwoRules));
  testing::RecordingSink sink;
  p.Process(Obs("site/freezer1", 1, -18.0), kArrival, sink);
  const std::string before = testing::SnapshotBytes(p);
  auto bad = testing::ParseConfig(kTwoRules);
  bad.mutable_rules(0)->mutable_spec()->mutable_detectors(0)->set_arl0(1);
  std::vector<std::string> reset;
  const est::Status s = p.Reconfigure(bad, &reset);
  EXPECT_EQ(s.code(), est::ErrorCode::kInvalidConfig);
  EXPECT_TRUE(reset.empty());
  EXPECT_EQ(testing::SnapshotBytes(p), before);
}

TEST(ReconfigureTest, ResetForgetsAChannel) {
  Pipeline p(DefaultConfig());
  testing::RecordingSink sink;
  p.Process(Obs("site/a", 1, 1.0), kArrival, sink);
  EXPECT_TRUE(p.Reset("site/a"));
  EXPECT_FALSE(p.Reset("site/a"));
  EXPECT_EQ(p.counters().channels, 0u);
}

}  // namespace
}  // namespace bayline::pipeline
