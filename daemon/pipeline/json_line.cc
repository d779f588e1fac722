#include <google/protobuf/util/json_util.h>

#include "daemon/pipeline/pipeline.h"

namespace bayline::pipeline {

std::string ToJsonLine(const bayline::v1::Publication& publication) {
  google::protobuf::util::JsonPrintOptions options;
  options.preserve_proto_field_names = true;
  options.always_print_primitive_fields = true;
  options.add_whitespace = false;
  std::string out;
  const auto status = google::protobuf::util::MessageToJsonString(publication, &out, options);
  if (!status.ok()) {
    // Only reachable with invalid UTF-8 in a string field, which the pipeline never publishes.
    return "{\"error\":\"publication could not be rendered as JSON\"}";
  }
  return out;
}

}  // namespace bayline::pipeline
