#include "daemon/pipeline/channel_name.h"

namespace bayline::pipeline {

uint64_t ChannelHash(std::string_view name) {
  uint64_t h = 14695981039346656037ull;  // FNV-1a 64-bit offset basis
  for (unsigned char c : name) {
    h ^= c;
    h *= 1099511628211ull;  // FNV prime
  }
  return h;
}

bool IsValidUtf8(std::string_view s) {
  std::size_t i = 0;
  while (i < s.size()) {
    const unsigned char c = static_cast<unsigned char>(s[i]);
    if (c < 0x80) {
      ++i;
      continue;
    }
    int extra = 0;
    uint32_t cp = 0;
    if ((c & 0xE0) == 0xC0) {
      extra = 1;
      cp = c & 0x1F;
    } else if ((c & 0xF0) == 0xE0) {
      extra = 2;
      cp = c & 0x0F;
    } else if ((c & 0xF8) == 0xF0) {
      extra = 3;
      cp = c & 0x07;
    } else {
      return false;
    }
    if (i + extra >= s.size()) return false;  // truncated sequence
    for (int k = 1; k <= extra; ++k) {
      const unsigned char cc = static_cast<unsigned char>(s[i + k]);
      if ((cc & 0xC0) != 0x80) return false;
      cp = (cp << 6) | (cc & 0x3F);
    }
    static constexpr uint32_t kMinForLength[4] = {0, 0x80, 0x800, 0x10000};
    if (cp < kMinForLength[extra] || cp > 0x10FFFF || (cp >= 0xD800 && cp <= 0xDFFF)) return false;
    i += extra + 1;
  }
  return true;
}

ChannelNameProblem CheckChannelName(std::string_view name, uint32_t max_bytes) {
  if (name.empty()) return ChannelNameProblem::kEmpty;
  if (name.size() > max_bytes) return ChannelNameProblem::kTooLong;
  for (unsigned char c : name) {
    if (c < 0x20 || c == 0x7F) return ChannelNameProblem::kInvalid;
  }
  if (!IsValidUtf8(name)) return ChannelNameProblem::kInvalid;
  return ChannelNameProblem::kOk;
}

std::string_view ChannelNameReason(ChannelNameProblem problem) {
  switch (problem) {
    case ChannelNameProblem::kOk: return "";
    case ChannelNameProblem::kEmpty: return "empty_channel_name";
    case ChannelNameProblem::kTooLong: return "channel_name_too_long";
    case ChannelNameProblem::kInvalid: return "invalid_channel_name";
  }
  return "invalid_channel_name";
}

}  // namespace bayline::pipeline
