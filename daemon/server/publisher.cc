#include "daemon/server/publisher.h"

#include <spdlog/spdlog.h>

namespace bayline::server {
namespace {
constexpr const char* kStopEndpoint = "inproc://bayline-publisher-stop";
}

Publisher::Publisher(zmq::context_t& context)
    : pull_(context, zmq::socket_type::pull),
      pub_(context, zmq::socket_type::pub),
      stop_receiver_(context, zmq::socket_type::pair),
      stop_sender_(context, zmq::socket_type::pair) {}

Publisher::~Publisher() { Stop(); }

bool Publisher::Bind(const std::string& publish_endpoint, std::string* bound_endpoint,
                     std::string* error) {
  try {
    pull_.set(zmq::sockopt::rcvhwm, kPublishHighWaterMark);
    pull_.bind(kPublisherInprocEndpoint);
    stop_receiver_.bind(kStopEndpoint);
    stop_sender_.connect(kStopEndpoint);
    pub_.set(zmq::sockopt::sndhwm, kPublishHighWaterMark);
    pub_.set(zmq::sockopt::linger, 1000);
    pub_.bind(publish_endpoint);
    *bound_endpoint = pub_.get(zmq::sockopt::last_endpoint);
  } catch (const zmq::error_t& e) {
    *error = "publish_bind " + publish_endpoint + ": " + e.what();
    return false;
  }
  return true;
}

void Publisher::Start() { thread_ = std::thread([this] { Run(); }); }

void Publisher::Stop() {
  if (!thread_.joinable()) return;
  stop_sender_.send(zmq::str_buffer("stop"), zmq::send_flags::none);
  thread_.join();
}

bool Publisher::ForwardOne(zmq::recv_flags flags) {
  zmq::message_t part;
  for (;;) {
    if (!pull_.recv(part, flags)) return false;
    const bool more = part.more();
    pub_.send(part, more ? zmq::send_flags::sndmore : zmq::send_flags::none);
    if (!more) break;
    flags = zmq::recv_flags::none;  // the rest of a multipart message is already there
  }
  forwarded_.fetch_add(1, std::memory_order_relaxed);
  return true;
}

void Publisher::Run() {
  zmq::pollitem_t items[] = {{pull_.handle(), 0, ZMQ_POLLIN, 0},
                             {stop_receiver_.handle(), 0, ZMQ_POLLIN, 0}};
  for (;;) {
    zmq::poll(items, 2, std::chrono::milliseconds(-1));
    if (items[0].revents & ZMQ_POLLIN) {
      // Forward a burst before polling again (polling per message costs a system call).
      for (int i = 0; i < 1024 && ForwardOne(zmq::recv_flags::dontwait); ++i) {
      }
    }
    if (items[1].revents & ZMQ_POLLIN) break;
  }
  // Workers have stopped before the publisher: forward what they sent last.
  while (ForwardOne(zmq::recv_flags::dontwait)) {
  }
}

}  // namespace bayline::server
