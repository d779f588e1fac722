// The memory bounds of the daemon's sockets and queues, from DaemonConfig.limits with the defaults
// applied (config.proto documents the fields; README "Bounds" the resulting ceiling).
//
//   ingest message   ZeroMQ maximum message size on PULL/SUB: max_ingest_message_bytes,
//                    default max(4 MiB, max_frame_bytes)
//   ingest receive   ZeroMQ's receive queue per connected producer, in messages:
//                    max(1, ingest_queue_bytes / ingest message), default 256 MiB / 4 MiB = 64;
//                    so at most ingest_queue_bytes per producer
//   control message  ZeroMQ maximum message size on the REP socket: default 1 MiB
//   worker queues    serialized observations queued for the workers, all together:
//                    max_queued_bytes, default 64 MiB, split evenly over the workers
// Header only: the daemon and ValidateConfig share it.
#pragma once

#include <algorithm>
#include <cstddef>
#include <cstdint>
#include <string>

#include "bayline/v1/config.pb.h"

namespace bayline::pipeline {

inline constexpr uint32_t kDefaultMaxFrameBytes = uint32_t(1) << 20;
inline constexpr uint32_t kDefaultIngestMessageBytes = uint32_t(4) << 20;
inline constexpr uint32_t kDefaultControlMessageBytes = uint32_t(1) << 20;
inline constexpr uint32_t kMinControlMessageBytes = uint32_t(16) << 10;

inline constexpr uint64_t kDefaultMaxQueuedBytes = uint64_t(64) << 20;
inline constexpr int kMaxIngestReceiveMessages = 100000;

struct ResourceLimits {
  uint32_t ingest_message_bytes = 0;
  int ingest_receive_messages = 0;  // ZMQ_RCVHWM of the ingest sockets
  uint32_t control_message_bytes = 0;
  uint64_t queued_bytes_per_worker = 0;
};

inline ResourceLimits EffectiveResourceLimits(const bayline::v1::Limits& limits, size_t workers) {
  ResourceLimits r;
  const uint32_t frame =
      limits.max_frame_bytes() > 0 ? limits.max_frame_bytes() : kDefaultMaxFrameBytes;
  r.ingest_message_bytes = limits.max_ingest_message_bytes() > 0
                               ? limits.max_ingest_message_bytes()
                               : std::max(kDefaultIngestMessageBytes, frame);
  // Unset: a receive queue of kMaxIngestReceiveMessages messages. A queue of a few messages costs
  // frames: when a producer disconnects while ZeroMQ has stopped reading its connection (queue
  // full), what is still in the kernel's socket buffer is dropped with the connection, so a byte
  // bound is the operator's explicit choice.
  r.ingest_receive_messages =
      limits.ingest_queue_bytes() > 0
          ? int(std::clamp<uint64_t>(limits.ingest_queue_bytes() / r.ingest_message_bytes, 1,
                                     kMaxIngestReceiveMessages))
          : kMaxIngestReceiveMessages;
  r.control_message_bytes = limits.max_control_message_bytes() > 0
                                ? limits.max_control_message_bytes()
                                : kDefaultControlMessageBytes;
  const uint64_t queued =
      limits.max_queued_bytes() > 0 ? limits.max_queued_bytes() : kDefaultMaxQueuedBytes;
  r.queued_bytes_per_worker = std::max<uint64_t>(1, queued / std::max<size_t>(1, workers));
  return r;
}

// "" when the limits are consistent, else "<field path>: <what is wrong>".
inline std::string CheckResourceLimits(const bayline::v1::Limits& limits) {
  const uint32_t frame =
      limits.max_frame_bytes() > 0 ? limits.max_frame_bytes() : kDefaultMaxFrameBytes;
  if (limits.max_ingest_message_bytes() > 0 && limits.max_ingest_message_bytes() < frame) {
    return "limits.max_ingest_message_bytes: must be >= limits.max_frame_bytes (" +
           std::to_string(frame) + "), got " + std::to_string(limits.max_ingest_message_bytes());
  }
  if (limits.max_control_message_bytes() > 0 &&
      limits.max_control_message_bytes() < kMinControlMessageBytes) {
    return "limits.max_control_message_bytes: must be >= " +
           std::to_string(kMinControlMessageBytes) + ", got " +
           std::to_string(limits.max_control_message_bytes());
  }
  return "";
}

}  // namespace bayline::pipeline
