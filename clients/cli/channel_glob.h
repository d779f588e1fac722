// Channel globs, as in the daemon's rules: '*' matches within one '/'-separated segment, '**'
// matches across segments, '?' matches one character (not '/'). Everything else is literal.
#pragma once

#include <string>
#include <string_view>

namespace bayline::cli {

// True when `name` matches `glob` entirely. An empty glob matches every name.
bool GlobMatch(std::string_view glob, std::string_view name);

// The literal text before the first wildcard ("site3/*/probe?" -> "site3/"), usable as a
// ZeroMQ prefix subscription after "<kind>/".
std::string LiteralPrefix(std::string_view glob);

}  // namespace bayline::cli
