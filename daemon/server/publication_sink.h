// The worker side of publishing: a pipeline::PublicationSink that serializes each publication
// straight into a ZeroMQ message and collects the [topic, Publication] pairs of the work being
// processed; Flush() hands them to the shared PUB socket (Publisher::Send) in one call. The worker
// flushes after every item it takes from its queue (a batch of observations, a rejected frame, a
// control task), before it can block again, and the sink flushes by itself every kMaxPending
// publications and at once after an alarm. Input errors are also logged, rate-limited per reason.
// Thread safety: none; owned by one worker thread.
#pragma once

#include <string>
#include <vector>
#include <zmq.hpp>

#include "daemon/pipeline/publication_sink.h"
#include "daemon/server/publisher.h"
#include "daemon/server/rate_limited_log.h"

namespace bayline::server {

class ZmqPublicationSink : public pipeline::PublicationSink {
 public:
  static constexpr size_t kMaxPending = 256;  // publications

  explicit ZmqPublicationSink(Publisher& publisher) : publisher_(publisher) {
    pending_.reserve(2 * kMaxPending);
  }
  void Publish(const std::string& topic, const bayline::v1::Publication& publication) override;
  // Sends every collected publication now.
  void Flush() { publisher_.Send(pending_); }
  void FlushLog() { log_.Flush(); }

 private:
  Publisher& publisher_;
  std::vector<zmq::message_t> pending_;  // topic, publication, topic, publication, ...
  RateLimitedLog log_;
};

}  // namespace bayline::server
