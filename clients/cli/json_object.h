// Parsing one JSON Lines record: a flat JSON object whose values are strings, numbers, booleans,
// null, or arrays of numbers (for regressor vectors). Nested objects are refused: an input line is
// one observation, not a document. Number tokens are kept as written (see record.h).
#pragma once

#include <optional>
#include <string>
#include <string_view>

#include "clients/cli/record.h"

namespace bayline::cli {

// Parses `line` into out->fields (cleared first; columns numbered by key order). Returns an error
// text naming the character position (1-based) and the problem, or nullopt on success.
std::optional<std::string> ParseJsonObjectLine(std::string_view line, Record* out);

}  // namespace bayline::cli
