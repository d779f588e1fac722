#include "clients/cli/json_render.h"

#include <google/protobuf/util/json_util.h>

namespace bayline::cli {

std::string MessageJsonLine(const google::protobuf::Message& message) {
  google::protobuf::util::JsonPrintOptions options;
  options.preserve_proto_field_names = true;
  options.add_whitespace = false;
  options.always_print_primitive_fields = true;  // as ToJsonLine (json_line.h) does
  std::string out;
  auto status = google::protobuf::util::MessageToJsonString(message, &out, options);
  if (!status.ok()) return "{}";  // only for invalid UTF-8 strings, which the daemon never sends
  return out;
}

}  // namespace bayline::cli
