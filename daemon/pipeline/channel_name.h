// Channel names: hashing and validation.
#pragma once

#include <cstdint>
#include <string_view>

namespace bayline::pipeline {

// Stable 64-bit FNV-1a hash of a channel name: the daemon routes channels to shards and workers by
// it (daemon/server/routing.h), and it keys the channel registry.
uint64_t ChannelHash(std::string_view name);

// Why a name is refused; kOk when it is acceptable. Stable reason codes in ChannelNameReason().
enum class ChannelNameProblem { kOk, kEmpty, kTooLong, kInvalid };

// A name is acceptable when it is non-empty, at most max_bytes bytes, valid UTF-8 (no overlong
// forms, no surrogates, nothing above U+10FFFF) and free of control characters (U+0000-U+001F,
// U+007F), which would corrupt topic filters and terminal output.
ChannelNameProblem CheckChannelName(std::string_view name, uint32_t max_bytes);

// "empty_channel_name", "channel_name_too_long", "invalid_channel_name" ("" for kOk).
std::string_view ChannelNameReason(ChannelNameProblem problem);

// True when s is valid UTF-8 (as above, control characters allowed).
bool IsValidUtf8(std::string_view s);

}  // namespace bayline::pipeline
