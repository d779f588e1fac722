#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <random>
#include <string>

#include "tests/unit/daemon/pipeline/test_util.h"

namespace bayline::pipeline {
namespace {

using bayline::v1::Publication;
using testing::kArrival;
using testing::Obs;
using testing::ParseConfig;
using testing::RecordingSink;
using testing::SnapshotBytes;

TEST(ProcessTest, DefaultRuleMakesGaussianWithoutAndLinearWithRegressors) {
  Pipeline p(DefaultConfig());
  RecordingSink sink;
  p.Process(Obs("coldstore/freezer1/temperature", 1, -18.2), kArrival, sink);
  p.Process(Obs("coldstore/probe7/calibration", 1, 4.1, {4.0, 1.0}), kArrival, sink);
  const auto list = p.List("");
  ASSERT_EQ(list.channels_size(), 2);
  EXPECT_EQ(list.channels(0).name(), "coldstore/freezer1/temperature");
  EXPECT_EQ(list.channels(0).model(), "gaussian");
  EXPECT_EQ(list.channels(0).rule(), "default");
  EXPECT_EQ(list.channels(1).model(), "linear");

  const auto estimates = sink.OfKind(Publication::kEstimate);
  ASSERT_EQ(estimates.size(), 6u);  // ls, ml, map for each channel (every_n = 1)
  const auto& g = estimates[0]->publication.estimate();
  EXPECT_EQ(estimates[0]->topic, "estimate/coldstore/freezer1/temperature");
  EXPECT_EQ(g.estimator(), "ls");
  EXPECT_EQ(g.names_size(), 2);
  EXPECT_EQ(g.names(0), "mean");
  EXPECT_EQ(g.names(1), "variance");
  EXPECT_EQ(estimates[1]->publication.estimate().estimator(), "ml");
  EXPECT_EQ(estimates[2]->publication.estimate().estimator(), "map");
  const auto& l = estimates[3]->publication.estimate();
  ASSERT_EQ(l.names_size(), 3);
  EXPECT_EQ(l.names(0), "intercept");
  EXPECT_EQ(l.names(1), "x1");
  EXPECT_EQ(l.names(2), "x2");
  EXPECT_EQ(l.model(), "linear");
}

// Config with a count model (domain checks), a small channel cap and a restricted match.
bayline::v1::DaemonConfig BadInputConfig() {
  return ParseConfig(R"(
    limits { max_channels: 3 max_regressors: 4 }
    rules { name: "counts" match: "counts/**" spec { model: "poisson" detectors { kind: "cusum" } } }
    rules { name: "probes" match: "site/**" spec { detectors { kind: "cusum" } } })");
}

struct BadCase {
  const char* reason;
  bayline::v1::Observation obs;
};

TEST(ProcessTest, EveryBadInputPublishesOneInputErrorAndChangesNothing) {
  ASSERT_TRUE(ValidateConfig(BadInputConfig()).ok());
  Pipeline p(BadInputConfig());
  RecordingSink sink;
  for (uint64_t i = 1; i <= 10; ++i) {
    p.Process(Obs("site/a", i, 1.0 + 0.1 * double(i % 3)), kArrival, sink);
    p.Process(Obs("counts/doors", i, double(i % 4)), kArrival, sink);
    p.Process(Obs("site/b", i, 2.0, {double(i)}), kArrival, sink);
  }
  ASSERT_EQ(p.counters().channels, 3u);
  const double nan = std::numeric_limits<double>::quiet_NaN();
  std::vector<BadCase> cases;
  cases.push_back({"empty_channel_name", Obs("", 11, 1.0)});
  cases.push_back({"channel_name_too_long", Obs(std::string(300, 'a'), 11, 1.0)});
  cases.push_back({"invalid_channel_name", Obs("site/\xFF\xFE", 11, 1.0)});
  cases.push_back({"no_matching_rule", Obs("elsewhere/x", 1, 1.0)});
  cases.push_back({"channel_limit", Obs("site/new", 1, 1.0)});
  cases.push_back({"too_many_regressors", Obs("site/b", 11, 1.0, {1, 2, 3, 4, 5})});
  cases.push_back({"non_finite", Obs("site/a", 11, nan)});
  cases.push_back(
      {"non_finite", Obs("site/b", 11, 1.0, {std::numeric_limits<double>::infinity()})});
  cases.push_back({"wrong_regressor_count", Obs("site/a", 11, 1.0, {2.0})});
  cases.push_back({"wrong_regressor_count", Obs("site/b", 11, 1.0, {2.0, 3.0})});
  cases.push_back({"out_of_domain", Obs("counts/doors", 11, -1.0)});
  cases.push_back({"out_of_domain", Obs("counts/doors", 11, 2.5)});
  bayline::v1::Observation zero_weight = Obs("site/a", 11, 1.0);
  zero_weight.set_weight(0.0);
  cases.push_back({"invalid_weight", zero_weight});
  bayline::v1::Observation bad_exposure = Obs("counts/doors", 11, 1.0);
  bad_exposure.set_exposure(0.0);
  cases.push_back({"out_of_domain", bad_exposure});

  for (const auto& c : cases) {
    const std::string before = SnapshotBytes(p);
    const uint64_t accepted = p.counters().accepted;
    const uint64_t by_reason = p.counters().rejected_by_reason.count(c.reason)
                                   ? p.counters().rejected_by_reason.at(c.reason)
                                   : 0;
    sink.Clear();
    p.Process(c.obs, kArrival, sink);
    ASSERT_EQ(sink.records.size(), 1u) << c.reason;
    const auto& rec = sink.records[0];
    ASSERT_EQ(rec.publication.kind_case(), Publication::kInputError) << c.reason;
    EXPECT_EQ(rec.publication.input_error().reason(), c.reason);
    EXPECT_FALSE(rec.publication.input_error().message().empty());
    EXPECT_EQ(rec.topic.rfind("input_error/", 0), 0u);
    EXPECT_TRUE(rec.publication.input_error().channel().empty() ||
                rec.publication.input_error().channel() == c.obs.channel());
    EXPECT_EQ(SnapshotBytes(p), before) << c.reason;
    EXPECT_EQ(p.counters().accepted, accepted);
    EXPECT_EQ(p.counters().rejected_by_reason.at(c.reason), by_reason + 1) << c.reason;
    EXPECT_EQ(p.counters().channels, 3u);
  }
  EXPECT_EQ(p.counters().rejected_total, cases.size());

  sink.Clear();
  p.RejectFrame("malformed_frame", "not a bayline.v1.IngestFrame", kArrival, sink);
  ASSERT_EQ(sink.records.size(), 1u);
  EXPECT_EQ(sink.records[0].publication.input_error().reason(), "malformed_frame");
  EXPECT_EQ(p.counters().rejected_by_reason.at("malformed_frame"), 1u);
}

TEST(ProcessTest, RejectedFirstObservationCreatesNoChannel) {
  Pipeline p(DefaultConfig());
  RecordingSink sink;
  p.Process(Obs("site/a", 1, std::numeric_limits<double>::quiet_NaN()), kArrival, sink);
  EXPECT_EQ(p.counters().channels, 0u);
  EXPECT_FALSE(p.Ask("site/a").has_value());
  EXPECT_EQ(sink.OfKind(Publication::kInputError).size(), 1u);
}

TEST(ProcessTest, SeqDuplicatesDroppedGapsAndReorderingCountedTooOldRefused) {
  Pipeline p(DefaultConfig());
  RecordingSink sink;
  for (uint64_t seq : {1, 2, 3, 3, 5, 4, 4})
    p.Process(Obs("site/a", seq, 1.0 + 0.01 * seq), kArrival, sink);
  p.Process(Obs("site/a", 0, 1.5), kArrival, sink);  // unnumbered: becomes 6
  p.Process(Obs("site/a", 200, 1.2), kArrival, sink);
  p.Process(Obs("site/a", 100, 1.3), kArrival, sink);  // too far back to tell: refused
  const auto& c = p.counters();
  EXPECT_EQ(c.accepted, 7u);
  EXPECT_EQ(c.seq_duplicates, 2u);  // the second 3 and the second 4
  EXPECT_EQ(c.seq_gaps, 2u);        // 3 -> 5 and 6 -> 200
  EXPECT_EQ(c.seq_reordered, 1u);   // 4 after 5
  EXPECT_EQ(c.rejected_total, 1u);
  EXPECT_EQ(c.rejected_by_reason.at("seq_too_old"), 1u);
  const auto info = p.Ask("site/a")->info();
  EXPECT_EQ(info.accepted(), 7u);
  EXPECT_EQ(info.last_seq(), 200u);
  // Duplicates publish nothing: 7 accepted observations x 3 estimators.
  EXPECT_EQ(sink.OfKind(Publication::kEstimate).size(), 21u);
  const auto errors = sink.OfKind(Publication::kInputError);
  ASSERT_EQ(errors.size(), 1u);
  EXPECT_EQ(errors[0]->publication.input_error().reason(), "seq_too_old");
  EXPECT_EQ(errors[0]->publication.input_error().seq(), 100u);
}

TEST(ProcessTest, ImplausibleSeqIsRefusedAndChangesNothing) {
  Pipeline p(DefaultConfig());
  RecordingSink sink;
  p.Process(Obs("site/a", 1, 1.0), kArrival, sink);
  const auto before = p.Ask("site/a");
  p.Process(Obs("site/a", ~uint64_t{0}, 5.0), kArrival, sink);
  p.Process(Obs("site/b", uint64_t{1} << 63, 5.0), kArrival, sink);  // not even as a first number
  EXPECT_EQ(p.Ask("site/a")->SerializeAsString(), before->SerializeAsString());
  EXPECT_FALSE(p.Ask("site/b").has_value());
  EXPECT_EQ(p.counters().rejected_by_reason.at("implausible_seq"), 2u);
  p.Process(Obs("site/a", 2, 1.1), kArrival, sink);
  EXPECT_EQ(p.Ask("site/a")->info().accepted(), 2u);
  EXPECT_EQ(p.counters().seq_duplicates, 0u);
}

TEST(ProcessTest, PublishPolicyEveryN) {
  auto config = DefaultConfig();
  config.mutable_rules(0)->mutable_spec()->mutable_publish()->set_every_n(3);
  Pipeline p(config);
  RecordingSink sink;
  for (uint64_t i = 1; i <= 7; ++i) p.Process(Obs("site/a", i, double(i)), kArrival, sink);
  const auto est = sink.OfKind(Publication::kEstimate);
  ASSERT_EQ(est.size(), 6u);
  for (int k = 0; k < 3; ++k) EXPECT_EQ(est[k]->publication.estimate().seq(), 3u);
  for (int k = 3; k < 6; ++k) EXPECT_EQ(est[k]->publication.estimate().seq(), 6u);
  EXPECT_EQ(est[5]->publication.estimate().accepted(), 6u);
}

TEST(ProcessTest, PublishPolicyMinIntervalByObservationTime) {
  auto config = DefaultConfig();
  config.mutable_rules(0)->mutable_spec()->mutable_publish()->set_min_interval_ms(1000);
  Pipeline p(config);
  RecordingSink sink;
  const int64_t t0 = 1'700'000'000'000'000'000;
  for (uint64_t i = 0; i < 10; ++i) {
    p.Process(Obs("site/a", i + 1, double(i % 3), {}, t0 + int64_t(i) * 300'000'000), kArrival,
              sink);
  }
  std::vector<uint64_t> seqs;
  for (const auto* r : sink.OfKind(Publication::kEstimate)) {
    if (r->publication.estimate().estimator() == "ls")
      seqs.push_back(r->publication.estimate().seq());
  }
  // t = 0 (first), 1200 ms, 2400 ms: seq 1, 5, 9.
  EXPECT_EQ(seqs, (std::vector<uint64_t>{1, 5, 9}));
}

TEST(ProcessTest, PredictionRequestAnswersAndChangesNothing) {
  Pipeline p(DefaultConfig());
  RecordingSink sink;
  std::mt19937_64 rng(7);
  std::normal_distribution<double> noise(0.0, 0.05);
  for (uint64_t i = 1; i <= 40; ++i) {
    const double x = 0.5 * double(i);
    p.Process(Obs("coldstore/probe7/calibration", i, 0.2 + 1.5 * x + noise(rng), {x}), kArrival,
              sink);
  }
  const std::string before = SnapshotBytes(p);
  const auto counters_before = p.counters().accepted;
  sink.Clear();
  bayline::v1::Observation request;
  request.set_channel("coldstore/probe7/calibration");
  request.add_x(10.0);
  p.Process(request, kArrival, sink);
  const auto predictions = sink.OfKind(Publication::kPrediction);
  ASSERT_EQ(predictions.size(), 3u);
  EXPECT_EQ(sink.records.size(), 3u);
  for (const auto* r : predictions) {
    const auto& pr = r->publication.prediction();
    EXPECT_EQ(r->topic, "prediction/coldstore/probe7/calibration");
    EXPECT_NEAR(pr.mean(), 0.2 + 15.0, 0.2) << pr.estimator();
    EXPECT_GT(pr.sd(), 0.0);
    EXPECT_LT(pr.lower(), pr.mean());
    EXPECT_GT(pr.upper(), pr.mean());
    EXPECT_DOUBLE_EQ(pr.level(), 0.95);
    ASSERT_EQ(pr.x_size(), 1);
    EXPECT_EQ(pr.x(0), 10.0);
  }
  EXPECT_EQ(SnapshotBytes(p), before);
  EXPECT_EQ(p.counters().accepted, counters_before);

  sink.Clear();
  request.set_channel("coldstore/unknown");
  p.Process(request, kArrival, sink);
  ASSERT_EQ(sink.records.size(), 1u);
  EXPECT_EQ(sink.records[0].publication.input_error().reason(), "unknown_channel");
}

}  // namespace
}  // namespace bayline::pipeline
