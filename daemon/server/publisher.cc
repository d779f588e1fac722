#include "daemon/server/publisher.h"

namespace bayline::server {

Publisher::Publisher(zmq::context_t& context) : pub_(context, zmq::socket_type::pub) {}

bool Publisher::Bind(const std::string& publish_endpoint, std::string* bound_endpoint,
                     std::string* error) {
  try {
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

void Publisher::Send(std::vector<zmq::message_t>& parts) {
  if (parts.empty()) return;
  {
    std::lock_guard lock(mutex_);
    // PUB never blocks: at a subscriber's high-water mark it drops that subscriber's copy.
    for (size_t i = 0; i + 1 < parts.size(); i += 2) {
      (void)pub_.send(parts[i], zmq::send_flags::sndmore);
      (void)pub_.send(parts[i + 1], zmq::send_flags::none);
    }
  }
  sent_.fetch_add(parts.size() / 2, std::memory_order_relaxed);
  parts.clear();
}

}  // namespace bayline::server
