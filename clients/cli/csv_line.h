// Splitting one CSV line (RFC 4180 quoting: "a, b" and doubled quotes "" inside quotes; a quoted
// field may not span lines). A trailing '\r' is dropped.
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace bayline::cli {

// Splits `line` on `delimiter` into `fields` (cleared first). Returns an error text (e.g.
// "unterminated quoted field starting at column 3") or nullopt on success. Unquoted fields are
// trimmed of surrounding blanks; quoted ones are kept as written between the quotes.
std::optional<std::string> SplitCsvLine(std::string_view line, char delimiter,
                                        std::vector<std::string>* fields);

}  // namespace bayline::cli
