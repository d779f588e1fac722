#include "daemon/pipeline/resource_limits.h"

#include <gtest/gtest.h>

namespace bayline::pipeline {
namespace {

TEST(ResourceLimitsTest, DefaultsGiveTheDocumentedCeiling) {
  const ResourceLimits r = EffectiveResourceLimits(bayline::v1::Limits(), 4);
  EXPECT_EQ(r.ingest_message_bytes, 4u << 20);
  // Unset ingest_queue_bytes: a long queue, since a short one loses frames at a disconnect.
  EXPECT_EQ(r.ingest_receive_messages, 100000);
  EXPECT_EQ(r.control_message_bytes, 1u << 20);
  EXPECT_EQ(r.queued_bytes_per_worker, (64u << 20) / 4);
}

TEST(ResourceLimitsTest, TheIngestMessageLimitFollowsALargerFrameLimit) {
  bayline::v1::Limits limits;
  limits.set_max_frame_bytes(8u << 20);
  const ResourceLimits r = EffectiveResourceLimits(limits, 1);
  EXPECT_EQ(r.ingest_message_bytes, 8u << 20);
  limits.set_ingest_queue_bytes(256u << 20);
  EXPECT_EQ(EffectiveResourceLimits(limits, 1).ingest_receive_messages, 32);  // 256 MiB / 8 MiB
  limits.set_ingest_queue_bytes(1);  // less than one message: still one
  EXPECT_EQ(EffectiveResourceLimits(limits, 1).ingest_receive_messages, 1);
}

TEST(ResourceLimitsTest, InconsistentLimitsNameTheField) {
  bayline::v1::Limits limits;
  EXPECT_EQ(CheckResourceLimits(limits), "");
  limits.set_max_frame_bytes(2u << 20);
  limits.set_max_ingest_message_bytes(1u << 20);
  EXPECT_EQ(CheckResourceLimits(limits).rfind("limits.max_ingest_message_bytes: ", 0), 0u);
  limits.set_max_ingest_message_bytes(2u << 20);
  EXPECT_EQ(CheckResourceLimits(limits), "");
  limits.set_max_control_message_bytes(100);
  EXPECT_EQ(CheckResourceLimits(limits).rfind("limits.max_control_message_bytes: ", 0), 0u);
}

}  // namespace
}  // namespace bayline::pipeline
