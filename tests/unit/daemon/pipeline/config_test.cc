#include <gtest/gtest.h>

#include <fstream>
#include <sstream>
#include <string>

#include "daemon/defaults.h"
#include "tests/unit/daemon/pipeline/test_util.h"

namespace bayline::pipeline {
namespace {

using testing::ParseConfig;

// Expects rejection with kInvalidConfig and a message starting with the field path.
void ExpectRejected(const std::string& text, const std::string& path) {
  const auto config = ParseConfig(text);
  const est::Status s = ValidateConfig(config);
  ASSERT_FALSE(s.ok()) << text;
  EXPECT_EQ(s.code(), est::ErrorCode::kInvalidConfig);
  EXPECT_EQ(s.message().rfind(path + ":", 0), 0u) << s.message();
}

TEST(ConfigValidationTest, DefaultConfigIsValidAndUsesSharedEndpoints) {
  const auto c = DefaultConfig();
  EXPECT_TRUE(ValidateConfig(c).ok()) << ValidateConfig(c).ToString();
  ASSERT_EQ(c.endpoints().pull_bind_size(), 1);
  EXPECT_EQ(c.endpoints().pull_bind(0), kDefaultIngestEndpoint);
  EXPECT_EQ(c.endpoints().publish_bind(), kDefaultPublishEndpoint);
  EXPECT_EQ(c.endpoints().control_bind(), kDefaultControlEndpoint);
  ASSERT_EQ(c.rules_size(), 1);
  EXPECT_EQ(c.rules(0).match(), "**");
  EXPECT_EQ(c.rules(0).spec().model(), "auto");
  ASSERT_EQ(c.rules(0).spec().detectors_size(), 1);
  EXPECT_EQ(c.rules(0).spec().detectors(0).kind(), "cusum");
  EXPECT_EQ(c.rules(0).spec().detectors(0).arl0(), 0);  // unset: est::kDefaultArl0 applies
}

TEST(ConfigValidationTest, ErrorsNameTheFieldPath) {
  ExpectRejected(R"(rules { match: "**" } rules { match: "a" } rules { match: "b/**" spec {
                   detectors { kind: "cusum" arl0: 1 } } })",
                 "rules[2].spec.detectors[0].arl0");
  ExpectRejected(R"(rules { match: "**" spec { model: "weibull" } })", "rules[0].spec.model");
  ExpectRejected(R"(rules { match: "**" spec { model: "poisson" estimators: "ls" } })",
                 "rules[0].spec.estimators[0]");
  ExpectRejected(R"(rules { match: "**" spec { model: "gaussian" regressors: "t" } })",
                 "rules[0].spec.regressors");
  ExpectRejected(R"(rules { match: "" })", "rules[0].match");
  ExpectRejected(R"(rules { name: "x" match: "a" } rules { name: "x" match: "b" })",
                 "rules[1].name");
  ExpectRejected(R"(rules { match: "**" spec { forgetting { lambda: 1.5 } } })",
                 "rules[0].spec.forgetting.lambda");
  ExpectRejected(R"(rules { match: "**" spec { level: 1 } })", "rules[0].spec.level");
  ExpectRejected(R"(rules { match: "**" spec { detectors { kind: "shewhart" } } })",
                 "rules[0].spec.detectors[0].kind");
  ExpectRejected(R"(rules { match: "**" spec { detectors { kind: "cusum" mode: "phase2" } } })",
                 "rules[0].spec.detectors[0].target_sd");
  // phase2 on a family scored by its own law: the target must be a parameter of that law.
  ExpectRejected(
      R"(rules { match: "**" spec { model: "binomial" detectors { kind: "cusum" mode: "phase2" target_mean: 3 target_sd: 1 } } })",
      "rules[0].spec.detectors[0].target_mean");
  ExpectRejected(
      R"(rules { match: "**" spec { model: "poisson" detectors { kind: "cusum" mode: "phase2" target_mean: -1 target_sd: 1 } } })",
      "rules[0].spec.detectors[0].target_mean");
  ExpectRejected(
      R"(rules { match: "**" spec { model: "poisson" detectors { kind: "cusum" watch: "ls" } } })",
      "rules[0].spec.detectors[0].watch");
  ExpectRejected(
      R"(rules { match: "**" spec { model: "poisson" detectors { kind: "cusum" inflate_on_alarm: 10 } } })",
      "rules[0].spec.detectors[0].inflate_on_alarm");
  ExpectRejected(
      R"(rules { match: "**" spec { model: "gaussian" detectors { kind: "band" parameter: "gain" band_low: 0 band_high: 1 } } })",
      "rules[0].spec.detectors[0].parameter");
  ExpectRejected(R"(rules { match: "**" spec { detectors { kind: "glr" arl0: 100000 } } })",
                 "rules[0].spec.detectors[0].arl0");
  ExpectRejected(R"(rules { match: "**" spec { model: "linear" regressors: ["a", "a"] } })",
                 "rules[0].spec.regressors[1]");
  ExpectRejected(R"(rules { match: "**" spec { map_tracker: "particle" } })",
                 "rules[0].spec.map_tracker");
  ExpectRejected(R"(log_level: "loud")", "log_level");
  ExpectRejected(R"(shard: "3/2")", "shard");
  ExpectRejected(R"(endpoints { publish_bind: "localhost" })", "endpoints.publish_bind");
}

TEST(ConfigValidationTest, ExampleConfigParsesValidatesAndRuns) {
  std::ifstream in(std::string(BAYLINE_SOURCE_DIR) + "/daemon/pipeline/example.conf");
  ASSERT_TRUE(in.good());
  std::stringstream text;
  text << in.rdbuf();
  bayline::v1::DaemonConfig config;
  ASSERT_TRUE(google::protobuf::TextFormat::ParseFromString(text.str(), &config));
  const est::Status s = ValidateConfig(config);
  ASSERT_TRUE(s.ok()) << s.ToString();
  EXPECT_EQ(config.rules_size(), 5);

  Pipeline pipeline(config);
  testing::RecordingSink sink;
  for (uint64_t i = 1; i <= 30; ++i) {
    pipeline.Process(
        testing::Obs("coldstore/hall1/probe3/calibration", i, 0.1 + 1.01 * i, {double(i)}), 0,
        sink);
    pipeline.Process(testing::Obs("coldstore/hall1/freezer2/temperature", i, -18 + 0.1 * (i % 5)),
                     0, sink);
    pipeline.Process(testing::Obs("coldstore/hall1/door4", i, double(i % 3)), 0, sink);
    pipeline.Process(testing::Obs("packing/line1/weight", i, 500 + 0.5 * ((i % 4) - 1.5)), 0, sink);
  }
  EXPECT_EQ(pipeline.counters().accepted, 120u);
  EXPECT_EQ(pipeline.counters().rejected_total, 0u);
  const auto list = pipeline.List("");
  ASSERT_EQ(list.channels_size(), 4);
  EXPECT_EQ(list.channels(0).rule(), "door-openings");
  EXPECT_EQ(list.channels(0).model(), "poisson");
  EXPECT_EQ(list.channels(1).rule(), "freezer-temperature");
  EXPECT_EQ(list.channels(2).rule(), "probe-calibration");
  EXPECT_EQ(list.channels(2).model(), "linear");
  EXPECT_EQ(list.channels(3).rule(), "checkweigher");
}

}  // namespace
}  // namespace bayline::pipeline
