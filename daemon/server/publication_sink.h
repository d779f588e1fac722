// The worker side of publishing: a pipeline::PublicationSink that sends each publication as the
// two-frame message [topic, serialized Publication] on the worker's inproc PUSH socket (the
// publisher thread forwards it to the PUB socket). Input errors are also logged, rate-limited per
// reason. Thread safety: none; owned by one worker thread.
#pragma once

#include <zmq.hpp>

#include <string>

#include "daemon/pipeline/pipeline.h"
#include "daemon/server/rate_limited_log.h"

namespace bayline::server {

class ZmqPublicationSink : public pipeline::PublicationSink {
 public:
  explicit ZmqPublicationSink(zmq::socket_t& push) : push_(push) {}
  void Publish(const std::string& topic, const bayline::v1::Publication& publication) override;
  void FlushLog() { log_.Flush(); }

 private:
  zmq::socket_t& push_;
  std::string buffer_;  // reused serialization buffer
  RateLimitedLog log_;
};

}  // namespace bayline::server
