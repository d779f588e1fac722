#include "daemon/server/publication_sink.h"

#include <spdlog/spdlog.h>

namespace bayline::server {

void ZmqPublicationSink::Publish(const std::string& topic,
                                 const bayline::v1::Publication& publication) {
  pending_.emplace_back(topic.data(), topic.size());
  zmq::message_t& body = pending_.emplace_back(publication.ByteSizeLong());
  publication.SerializeWithCachedSizesToArray(static_cast<uint8_t*>(body.data()));
  if (publication.has_input_error()) {
    const auto& e = publication.input_error();
    if (log_.Allow(e.reason())) {
      spdlog::warn("input error {} channel \"{}\" seq {}: {}", e.reason(), e.channel(), e.seq(),
                   e.message());
    }
  }
  // Alarms leave at once; everything else at the end of the item or when enough have gathered.
  if (publication.has_alarm() || pending_.size() >= 2 * kMaxPending) Flush();
}

}  // namespace bayline::server
