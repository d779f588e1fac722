#include "daemon/server/frame_error_limit.h"

#include <gtest/gtest.h>

#include <string>
#include <vector>

namespace bayline::server {
namespace {

struct Collect : pipeline::PublicationSink {
  std::vector<bayline::v1::Publication> got;
  void Publish(const std::string&, const bayline::v1::Publication& p) override { got.push_back(p); }
};

bayline::v1::Publication Error(const std::string& reason) {
  bayline::v1::Publication p;
  p.mutable_input_error()->set_reason(reason);
  p.mutable_input_error()->set_channel("c");
  return p;
}

bayline::v1::Publication Estimate() {
  bayline::v1::Publication p;
  p.mutable_estimate()->set_channel("c");
  return p;
}

TEST(FrameErrorLimitTest, PublishesTheFirstErrorsThenOneSummaryWithCountsByReason) {
  Collect sink;
  FrameErrorLimit limit(sink);
  limit.Begin(7, 123);
  for (int i = 0; i < 20; ++i) limit.Publish("input_error/c", Error("non_finite"));
  limit.Publish("estimate/c", Estimate());  // other publications always pass
  limit.Begin(7, 999);                      // the same frame continues (next batch)
  for (int i = 0; i < 5; ++i) limit.Publish("input_error/c", Error("out_of_domain"));
  EXPECT_EQ(sink.got.size(), FrameErrorLimit::kIndividual + 1);
  limit.End();
  ASSERT_EQ(sink.got.size(), FrameErrorLimit::kIndividual + 2);
  const auto& summary = sink.got.back().input_error();
  EXPECT_EQ(summary.reason(), "summarized");
  EXPECT_EQ(summary.channel(), "");
  EXPECT_EQ(summary.time_ns(), 123);
  EXPECT_EQ(summary.message(),
            "9 further input errors of this frame not published one by one: non_finite=4, "
            "out_of_domain=5");
}

TEST(FrameErrorLimitTest, ANewFrameStartsAFreshCountAndNothingIsLimitedOutsideAFrame) {
  Collect sink;
  FrameErrorLimit limit(sink);
  limit.Begin(1, 0);
  for (int i = 0; i < 16; ++i) limit.Publish("input_error/c", Error("non_finite"));
  limit.Begin(2, 0);  // ends frame 1: nothing was held back, so no summary
  for (int i = 0; i < 16; ++i) limit.Publish("input_error/c", Error("non_finite"));
  limit.End();
  EXPECT_EQ(sink.got.size(), 32u);
  for (int i = 0; i < 100; ++i) limit.Publish("input_error/c", Error("non_finite"));
  EXPECT_EQ(sink.got.size(), 132u);
}

}  // namespace
}  // namespace bayline::server
