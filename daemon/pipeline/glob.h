// Glob patterns for rules and channel listings.
//
//   '*'   any run of characters within one '/'-separated segment (no '/')
//   '**'  any run of characters across segments (may contain '/'); "a/**/b" also matches "a/b"
//   '?'   exactly one character (one UTF-8 code point) other than '/'
//   other characters match themselves (byte for byte).
// The whole name must match. Cost O(pattern length * name length), no recursion.
#pragma once

#include <string_view>

namespace bayline::pipeline {

bool GlobMatch(std::string_view pattern, std::string_view name);

}  // namespace bayline::pipeline
