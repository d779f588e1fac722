// The PUB socket, shared by the worker threads. Each worker collects the publications of the work
// it is processing as ready-made ZeroMQ messages [topic, serialized Publication] (see
// ZmqPublicationSink) and hands them over with one Send() call, which sends them under a mutex.
// There is no publisher thread and no inproc hop: a publication leaves the daemon from the worker
// that produced it. (ZeroMQ sockets may be used by several threads one at a time with a full
// memory barrier between uses; the mutex provides both.)
//
// The PUB high-water mark is finite (kPublishHighWaterMark): a subscriber that cannot keep up
// loses publications rather than making the daemon's memory grow without bound. Sending never
// blocks a worker.
//
// Lifetime: construct and Bind() in the supervisor thread (bind errors are reported before any
// thread starts); Send() from any thread; destroy after every worker has stopped (the socket's
// linger lets the last publications reach connected subscribers).
#pragma once

#include <atomic>
#include <mutex>
#include <string>
#include <vector>
#include <zmq.hpp>

namespace bayline::server {

inline constexpr int kPublishHighWaterMark = 100000;

class Publisher {
 public:
  explicit Publisher(zmq::context_t& context);
  Publisher(const Publisher&) = delete;
  Publisher& operator=(const Publisher&) = delete;

  // Binds the PUB socket at `publish_endpoint`. False with *error on failure. On success
  // *bound_endpoint is the resolved endpoint (a "*" port replaced).
  bool Bind(const std::string& publish_endpoint, std::string* bound_endpoint, std::string* error);

  // Sends `parts` as consecutive two-part messages: parts[2i] is a topic, parts[2i + 1] its
  // publication. The messages are moved out (parts are left empty, ready for reuse). Any thread.
  void Send(std::vector<zmq::message_t>& parts);

  // Publications sent so far (any thread).
  uint64_t sent() const { return sent_.load(std::memory_order_relaxed); }

 private:
  std::mutex mutex_;
  zmq::socket_t pub_;
  std::atomic<uint64_t> sent_{0};
};

}  // namespace bayline::server
