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

namespace {

// Length of the valid UTF-8 sequence at s[i], or 0 when the bytes there are not one.
std::size_t Utf8SequenceLength(std::string_view s, std::size_t i) {
  const unsigned char c = static_cast<unsigned char>(s[i]);
  if (c < 0x80) return 1;
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
    return 0;
  }
  if (i + extra >= s.size()) return 0;  // truncated sequence
  for (int k = 1; k <= extra; ++k) {
    const unsigned char cc = static_cast<unsigned char>(s[i + k]);
    if ((cc & 0xC0) != 0x80) return 0;
    cp = (cp << 6) | (cc & 0x3F);
  }
  static constexpr uint32_t kMinForLength[4] = {0, 0x80, 0x800, 0x10000};
  if (cp < kMinForLength[extra] || cp > 0x10FFFF || (cp >= 0xD800 && cp <= 0xDFFF)) return 0;
  return std::size_t(extra) + 1;
}

}  // namespace

std::string ReplaceInvalidUtf8(std::string_view s) {
  std::string out;
  out.reserve(s.size());
  std::size_t i = 0;
  while (i < s.size()) {
    const std::size_t length = Utf8SequenceLength(s, i);
    if (length == 0) {
      out.append("\xEF\xBF\xBD");  // U+FFFD REPLACEMENT CHARACTER
      ++i;
    } else {
      out.append(s.substr(i, length));
      i += length;
    }
  }
  return out;
}

bool IsValidUtf8(std::string_view s) {
  for (std::size_t i = 0; i < s.size();) {
    const std::size_t length = Utf8SequenceLength(s, i);
    if (length == 0) return false;
    i += length;
  }
  return true;
}

namespace {

// In valid UTF-8, C1 controls are C2 80..C2 9F; U+202A-U+202E are E2 80 AA..E2 80 AE and
// U+2066-U+2069 are E2 81 A6..E2 81 A9.
bool HasFormattingControl(std::string_view s) {
  for (std::size_t i = 0; i + 1 < s.size(); ++i) {
    const auto b0 = static_cast<unsigned char>(s[i]);
    const auto b1 = static_cast<unsigned char>(s[i + 1]);
    if (b0 == 0xC2 && b1 >= 0x80 && b1 <= 0x9F) return true;
    if (b0 == 0xE2 && i + 2 < s.size()) {
      const auto b2 = static_cast<unsigned char>(s[i + 2]);
      if (b1 == 0x80 && b2 >= 0xAA && b2 <= 0xAE) return true;
      if (b1 == 0x81 && b2 >= 0xA6 && b2 <= 0xA9) return true;
    }
  }
  return false;
}

}  // namespace

ChannelNameProblem CheckChannelName(std::string_view name, uint32_t max_bytes) {
  if (name.empty()) return ChannelNameProblem::kEmpty;
  if (name.size() > max_bytes) return ChannelNameProblem::kTooLong;
  for (unsigned char c : name) {
    if (c < 0x20 || c == 0x7F) return ChannelNameProblem::kInvalid;
  }
  if (!IsValidUtf8(name) || HasFormattingControl(name)) return ChannelNameProblem::kInvalid;
  return ChannelNameProblem::kOk;
}

std::string_view ChannelNameReason(ChannelNameProblem problem) {
  switch (problem) {
    case ChannelNameProblem::kOk:
      return "";
    case ChannelNameProblem::kEmpty:
      return "empty_channel_name";
    case ChannelNameProblem::kTooLong:
      return "channel_name_too_long";
    case ChannelNameProblem::kInvalid:
      return "invalid_channel_name";
  }
  return "invalid_channel_name";
}

}  // namespace bayline::pipeline
