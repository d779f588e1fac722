// Helpers shared by the pipeline tests: a sink that records publications, observation builders,
// and the serialized snapshot of a pipeline (to check that something changed nothing).
#pragma once

#include <google/protobuf/text_format.h>

#include <cmath>
#include <initializer_list>
#include <string>
#include <vector>

#include "daemon/pipeline/channel_name.h"
#include "daemon/pipeline/daemon_config.h"
#include "daemon/pipeline/pipeline.h"
#include "daemon/pipeline/publication_sink.h"

namespace bayline::pipeline::testing {

struct Recorded {
  std::string topic;
  bayline::v1::Publication publication;
};

class RecordingSink : public PublicationSink {
 public:
  void Publish(const std::string& topic, const bayline::v1::Publication& p) override {
    records.push_back({topic, p});
  }
  std::vector<const Recorded*> OfKind(bayline::v1::Publication::KindCase kind) const {
    std::vector<const Recorded*> out;
    for (const auto& r : records) {
      if (r.publication.kind_case() == kind) out.push_back(&r);
    }
    return out;
  }
  void Clear() { records.clear(); }
  std::vector<Recorded> records;
};

inline bayline::v1::Observation Obs(const std::string& channel, uint64_t seq, double y,
                                    std::initializer_list<double> x = {}, int64_t time_ns = 0) {
  bayline::v1::Observation o;
  o.set_channel(channel);
  o.set_seq(seq);
  o.set_y(y);
  for (double v : x) o.add_x(v);
  // Unsigned arithmetic: a test's deliberately huge seq wraps instead of overflowing.
  const uint64_t default_ns = 1'700'000'000'000'000'000u + seq * 1'000'000u;
  o.set_time_ns(time_ns != 0 ? time_ns : static_cast<int64_t>(default_ns));
  return o;
}

inline std::string SnapshotBytes(const Pipeline& p) {
  bayline::v1::Snapshot s;
  p.SaveChannels(&s);
  return s.SerializeAsString();
}

inline bayline::v1::DaemonConfig ParseConfig(const std::string& text) {
  bayline::v1::DaemonConfig c;
  if (!google::protobuf::TextFormat::ParseFromString(text, &c)) c.set_log_level("unparseable");
  return c;
}

inline constexpr int64_t kArrival = 1'800'000'000'000'000'000;

}  // namespace bayline::pipeline::testing
