// Channel names: hashing and validation.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>

namespace bayline::pipeline {

// Stable 64-bit FNV-1a hash of a channel name: the daemon routes channels to shards and workers by
// it (daemon/server/routing.h), and it keys the channel registry.
uint64_t ChannelHash(std::string_view name);

// Why a name is refused; kOk when it is acceptable. Stable reason codes in ChannelNameReason().
enum class ChannelNameProblem { kOk, kEmpty, kTooLong, kInvalid };

// A name is acceptable when it is non-empty, at most max_bytes bytes, valid UTF-8 (no overlong
// forms, no surrogates, nothing above U+10FFFF) and free of control characters (C0 U+0000-U+001F,
// U+007F and C1 U+0080-U+009F), which would corrupt topic filters and terminal output, and of
// the bidirectional embedding, override and isolate controls (U+202A-U+202E, U+2066-U+2069), which
// make a name display as another one.
ChannelNameProblem CheckChannelName(std::string_view name, uint32_t max_bytes);

// "empty_channel_name", "channel_name_too_long", "invalid_channel_name" ("" for kOk).
std::string_view ChannelNameReason(ChannelNameProblem problem);

// True when s is valid UTF-8 (as above, control characters allowed).
bool IsValidUtf8(std::string_view s);

// s with every byte that is not part of a valid UTF-8 sequence (as above) replaced by U+FFFD: for
// text built from outside bytes (config files, requests) that must reach a client as a protobuf
// string.
std::string ReplaceInvalidUtf8(std::string_view s);

}  // namespace bayline::pipeline
