// JSON renderings of protobuf messages for CLI output: protobuf's own JSON mapping with the proto
// field names (snake_case), zero values printed, one line, no trailing newline. Publications go through the pipeline
// library's ToJsonLine so that `follow` and `replay` print byte-identical lines.
#pragma once

#include <string>

#include <google/protobuf/message.h>

#include "bayline/v1/publication.pb.h"

namespace bayline::cli {

std::string MessageJsonLine(const google::protobuf::Message& message);
std::string PublicationJsonLine(const bayline::v1::Publication& publication);

}  // namespace bayline::cli
