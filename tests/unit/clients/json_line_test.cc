// ToJsonLine (clients/cli/json_line.h) against protobuf's own JSON implementation (libprotobuf
// from Debian, the reference for the proto3 JSON mapping): what we write parses back with
// google::protobuf::util's parser to the same message, and where number formatting cannot differ
// the text is byte-identical to google::protobuf::util::MessageToJsonString with the same options.
#include "clients/cli/json_line.h"

#include <google/protobuf/util/json_util.h>
#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <string>

#include "daemon/pipeline/daemon_config.h"
#include "daemon/pipeline/pipeline.h"
#include "daemon/pipeline/publication_sink.h"

namespace bayline::cli {
namespace {

constexpr double kInf = std::numeric_limits<double>::infinity();
constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

std::string ProtobufJson(const bayline::v1::Publication& p) {
  google::protobuf::util::JsonPrintOptions options;
  options.preserve_proto_field_names = true;
  options.always_print_primitive_fields = true;
  std::string out;
  EXPECT_TRUE(google::protobuf::util::MessageToJsonString(p, &out, options).ok());
  return out;
}

// Parses `json` with protobuf's parser and requires the same message, compared on the wire bytes
// (so NaN, -0 and every bit of each double count).
void ExpectRoundTrip(const bayline::v1::Publication& original) {
  const std::string json = ToJsonLine(original);
  bayline::v1::Publication parsed;
  const auto status = google::protobuf::util::JsonStringToMessage(json, &parsed);
  ASSERT_TRUE(status.ok()) << status.ToString() << "\n" << json;
  std::string a, b;
  original.SerializeToString(&a);
  parsed.SerializeToString(&b);
  EXPECT_EQ(a, b) << json;
}

bayline::v1::Publication PlainEstimate() {
  bayline::v1::Publication p;
  auto* e = p.mutable_estimate();
  e->set_channel("coldstore/freezer2/probe7");
  e->set_seq(1234);
  e->set_time_ns(1'700'000'000'123'456'789);
  e->set_model("linear");
  e->set_estimator("ls");
  e->add_names("intercept");
  e->add_names("reference");
  for (double v : {0.5, -2.25}) e->add_value(v);
  for (double v : {0.125, 3.0}) e->add_std_error(v);
  for (double v : {-1.5, -8.0}) e->add_lower(v);
  for (double v : {2.5, 4.0}) e->add_upper(v);
  e->set_level(0.95);
  e->set_identifiable(true);
  e->set_effective_n(1234);
  e->set_log_likelihood(-1.5e+300);
  e->set_accepted(1234);
  return p;
}

TEST(JsonLineTest, ByteIdenticalToProtobufWhereFormattingAgrees) {
  EXPECT_EQ(ToJsonLine(PlainEstimate()), ProtobufJson(PlainEstimate()));
  bayline::v1::Publication empty_kinds[4];
  empty_kinds[0].mutable_estimate();
  empty_kinds[1].mutable_alarm();
  empty_kinds[2].mutable_input_error();
  empty_kinds[3].mutable_prediction();
  for (const auto& p : empty_kinds) EXPECT_EQ(ToJsonLine(p), ProtobufJson(p));
  EXPECT_EQ(ToJsonLine(bayline::v1::Publication()), "{}");
}

TEST(JsonLineTest, ExtremeNumbersRoundTrip) {
  bayline::v1::Publication p = PlainEstimate();
  auto* e = p.mutable_estimate();
  e->clear_value();
  for (double v : {kNaN, kInf, -kInf, -0.0, 0.1, 1.0 / 3.0, 1e-5, 1e21, 4.9e-324,
                   2.2250738585072014e-308, 1.7976931348623157e308, -123456789.123456789}) {
    e->add_value(v);
  }
  e->set_seq(std::numeric_limits<uint64_t>::max());
  e->set_time_ns(std::numeric_limits<int64_t>::min());
  e->set_accepted(0);
  e->set_effective_n(kNaN);
  ExpectRoundTrip(p);
  const std::string json = ToJsonLine(p);
  EXPECT_NE(json.find("\"NaN\""), std::string::npos) << json;
  EXPECT_NE(json.find("\"-Infinity\""), std::string::npos) << json;
  EXPECT_NE(json.find("\"seq\":\"18446744073709551615\""), std::string::npos) << json;
}

TEST(JsonLineTest, StringsAreEscaped) {
  bayline::v1::Publication p;
  auto* e = p.mutable_input_error();
  e->set_channel("site/\xc3\xa9tage \"quoted\" back\\slash");
  e->set_reason("non_finite");
  e->set_message(std::string("tab\tnewline\ncr\rnul") + '\0' + "\x01\x1f end");
  e->set_seq(7);
  ExpectRoundTrip(p);
  const std::string json = ToJsonLine(p);
  EXPECT_EQ(json.find('\n'), std::string::npos);
  EXPECT_NE(json.find("\\u0000"), std::string::npos) << json;
  EXPECT_NE(json.find("\\\"quoted\\\""), std::string::npos) << json;
}

TEST(JsonLineTest, EveryPublicationKindRoundTrips) {
  bayline::v1::Publication alarm;
  auto* a = alarm.mutable_alarm();
  a->set_channel("packing/line1");
  a->set_seq(99);
  a->set_detector("cusum");
  a->set_watched("map");
  a->set_state("raised");
  a->set_statistic(5.123456789);
  a->set_threshold(4.77);
  a->set_direction("up");
  a->set_onset_seq(90);
  a->set_onset_time_ns(-5);
  a->set_shift(-1.0e-300);
  a->set_trigger_y(kInf);
  ExpectRoundTrip(alarm);

  bayline::v1::Publication prediction;
  auto* q = prediction.mutable_prediction();
  q->set_channel("coldstore/probe3");
  q->set_estimator("ls");
  q->add_x(-18.25);
  q->add_x(3.0e-7);
  q->set_mean(-18.3);
  q->set_sd(0.04);
  q->set_lower(-18.38);
  q->set_upper(-18.22);
  q->set_level(0.99);
  ExpectRoundTrip(prediction);
  ExpectRoundTrip(PlainEstimate());
}

TEST(JsonLineTest, PipelineEstimateUsesProtoFieldNames) {
  // A publication as the pipeline builds it (the lines `replay` prints).
  struct FirstPublication : pipeline::PublicationSink {
    void Publish(const std::string&, const bayline::v1::Publication& p) override {
      if (!seen) first = p;
      seen = true;
    }
    bool seen = false;
    bayline::v1::Publication first;
  } sink;
  pipeline::Pipeline p(pipeline::DefaultConfig());
  bayline::v1::Observation obs;
  obs.set_channel("site/a");
  obs.set_seq(1);
  obs.set_y(2.0);
  obs.set_time_ns(1'700'000'000'000'000'000);
  p.Process(obs, obs.time_ns(), sink);
  ASSERT_TRUE(sink.seen);
  const std::string json = ToJsonLine(sink.first);
  EXPECT_NE(json.find("\"std_error\""), std::string::npos) << json;
  EXPECT_NE(json.find("\"effective_n\""), std::string::npos) << json;
  EXPECT_NE(json.find("\"channel\":\"site/a\""), std::string::npos) << json;
  EXPECT_EQ(json.find('\n'), std::string::npos);
  ExpectRoundTrip(sink.first);
}

}  // namespace
}  // namespace bayline::cli
