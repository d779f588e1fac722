#include "daemon/server/publication_sink.h"

#include <spdlog/spdlog.h>

namespace bayline::server {

void ZmqPublicationSink::Publish(const std::string& topic,
                                 const bayline::v1::Publication& publication) {
  publication.SerializeToString(&buffer_);
  push_.send(zmq::buffer(topic), zmq::send_flags::sndmore);
  push_.send(zmq::buffer(buffer_), zmq::send_flags::none);
  if (publication.has_input_error()) {
    const auto& e = publication.input_error();
    if (log_.Allow(e.reason())) {
      spdlog::warn("input error {} channel \"{}\" seq {}: {}", e.reason(), e.channel(), e.seq(),
                   e.message());
    }
  }
}

}  // namespace bayline::server
