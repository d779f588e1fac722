#include "clients/cli/json_render.h"

#include <google/protobuf/util/json_util.h>

#ifdef BAYLINE_HAVE_PIPELINE
#include "daemon/pipeline/pipeline.h"
#endif

namespace bayline::cli {

std::string MessageJsonLine(const google::protobuf::Message& message) {
  google::protobuf::util::JsonPrintOptions options;
  options.preserve_proto_field_names = true;
  options.add_whitespace = false;
  options.always_print_primitive_fields = true;  // as the pipeline's ToJsonLine does
  std::string out;
  auto status = google::protobuf::util::MessageToJsonString(message, &out, options);
  if (!status.ok()) return "{}";  // only for invalid UTF-8 strings, which the daemon never sends
  return out;
}

std::string PublicationJsonLine(const bayline::v1::Publication& publication) {
#ifdef BAYLINE_HAVE_PIPELINE
  return bayline::pipeline::ToJsonLine(publication);
#else
  return MessageJsonLine(publication);
#endif
}

}  // namespace bayline::cli
