// Glob patterns for rules and channel listings.
//
//   '*'   any run of characters within one '/'-separated segment (no '/')
//   '**'  any run of characters across segments (may contain '/'); "a/**/b" also matches "a/b"
//   '?'   exactly one character (one UTF-8 code point) other than '/'
//   '\'   the next byte matches itself: "\*", "\?" and "\\" match a literal '*', '?' and '\'
//         (a '\' at the end of the pattern matches itself)
//   other characters match themselves (byte for byte).
// The whole name must match.
//
// Cost: O(T * n) time and O(n) memory for T pattern tokens and a name of n bytes: one pass of a
// dynamic programme over the name per token, no recursion and no backtracking (a "**/" token keeps
// a running "some later '/' is followed by a match" flag instead of rescanning the name).
// Listings refuse patterns longer than kMaxGlobBytes, bounding a request to
// kMaxGlobBytes * (name length) steps per channel.
#pragma once

#include <cstddef>
#include <string_view>

namespace bayline::pipeline {

inline constexpr std::size_t kMaxGlobBytes = 4096;

bool GlobMatch(std::string_view pattern, std::string_view name);

}  // namespace bayline::pipeline
