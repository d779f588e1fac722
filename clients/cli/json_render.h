// JSON rendering of protobuf messages for CLI output (control replies, threshold results):
// protobuf's own JSON mapping with the proto field names (snake_case), zero values printed, one
// line, no trailing newline. Publications, printed in bulk, go through ToJsonLine (json_line.h), a
// faster writer of the same mapping.
#pragma once

#include <google/protobuf/message.h>

#include <string>

namespace bayline::cli {

std::string MessageJsonLine(const google::protobuf::Message& message);

}  // namespace bayline::cli
