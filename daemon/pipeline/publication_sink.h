// PublicationSink: where a pipeline's publications go (the daemon's PUB socket, `bayline replay`'s
// JSON lines, tests' recorders).
#pragma once

#include <string>

#include "bayline/v1/publication.pb.h"

namespace bayline::pipeline {

// Topic = "<kind>/<channel>", kind in {estimate, alarm, input_error, prediction}. The publication
// is only valid during the call (the pipeline reuses it).
class PublicationSink {
 public:
  virtual ~PublicationSink() = default;
  virtual void Publish(const std::string& topic, const bayline::v1::Publication& publication) = 0;
};

}  // namespace bayline::pipeline
