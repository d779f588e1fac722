// The publisher thread: the only owner of the PUB socket. Workers PUSH [topic, Publication]
// messages to its inproc PULL endpoint; it forwards them unchanged to PUB. The PUB high-water mark
// is finite (kPublishHighWaterMark): a subscriber that cannot keep up loses publications rather
// than making the daemon's memory grow without bound.
//
// Lifetime: construct and Bind() in the supervisor thread (bind errors are reported before any
// thread starts) -> Start() -> Stop() (forwards what the workers already sent, then joins).
#pragma once

#include <zmq.hpp>

#include <atomic>
#include <string>
#include <thread>

namespace bayline::server {

inline constexpr int kPublishHighWaterMark = 100000;
inline constexpr const char* kPublisherInprocEndpoint = "inproc://bayline-publications";

class Publisher {
 public:
  explicit Publisher(zmq::context_t& context);
  ~Publisher();
  Publisher(const Publisher&) = delete;
  Publisher& operator=(const Publisher&) = delete;

  // Binds the inproc PULL endpoint and the PUB socket at `publish_endpoint`. False with *error on
  // failure. On success *bound_endpoint is the resolved endpoint (a "*" port replaced).
  bool Bind(const std::string& publish_endpoint, std::string* bound_endpoint, std::string* error);

  void Start();
  void Stop();

  // Messages forwarded so far (any thread).
  uint64_t forwarded() const { return forwarded_.load(std::memory_order_relaxed); }

 private:
  void Run();
  bool ForwardOne(zmq::recv_flags flags);

  zmq::socket_t pull_;
  zmq::socket_t pub_;
  zmq::socket_t stop_receiver_;
  zmq::socket_t stop_sender_;
  std::thread thread_;
  std::atomic<uint64_t> forwarded_{0};
};

}  // namespace bayline::server
