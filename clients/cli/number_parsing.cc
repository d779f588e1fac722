#include "clients/cli/number_parsing.h"

#include <charconv>
#include <cmath>
#include <limits>

namespace bayline::cli {
namespace {

std::string_view Trim(std::string_view s) {
  while (!s.empty() && (s.front() == ' ' || s.front() == '\t')) s.remove_prefix(1);
  while (!s.empty() && (s.back() == ' ' || s.back() == '\t')) s.remove_suffix(1);
  return s;
}

}  // namespace

std::optional<double> ParseFiniteDouble(std::string_view text) {
  text = Trim(text);
  if (!text.empty() && text.front() == '+') text.remove_prefix(1);
  if (text.empty()) return std::nullopt;
  double value = 0;
  auto [end, ec] =
      std::from_chars(text.data(), text.data() + text.size(), value, std::chars_format::general);
  if (ec != std::errc() || end != text.data() + text.size() || !std::isfinite(value)) {
    return std::nullopt;
  }
  return value;
}

std::optional<uint64_t> ParseUnsigned(std::string_view text) {
  text = Trim(text);
  if (!text.empty() && text.front() == '+') text.remove_prefix(1);
  uint64_t value = 0;
  auto [end, ec] = std::from_chars(text.data(), text.data() + text.size(), value);
  if (ec == std::errc() && end == text.data() + text.size() && !text.empty()) return value;
  // "12.0" or "1e3": accept when it is an exact integer within double's exact range.
  auto d = ParseFiniteDouble(text);
  if (d && *d >= 0 && *d <= 9007199254740992.0 && std::floor(*d) == *d) {
    return static_cast<uint64_t>(*d);
  }
  return std::nullopt;
}

std::optional<int64_t> ParseSigned(std::string_view text) {
  text = Trim(text);
  if (!text.empty() && text.front() == '+') text.remove_prefix(1);
  int64_t value = 0;
  auto [end, ec] = std::from_chars(text.data(), text.data() + text.size(), value);
  if (ec == std::errc() && end == text.data() + text.size() && !text.empty()) return value;
  auto d = ParseFiniteDouble(text);
  if (d && std::fabs(*d) <= 9007199254740992.0 && std::floor(*d) == *d) {
    return static_cast<int64_t>(*d);
  }
  return std::nullopt;
}

std::optional<int64_t> ParseSecondsToNanos(std::string_view text) {
  text = Trim(text);
  if (!ParseFiniteDouble(text)) return std::nullopt;
  bool negative = false;
  std::string_view s = text;
  if (!s.empty() && (s.front() == '-' || s.front() == '+')) {
    negative = s.front() == '-';
    s.remove_prefix(1);
  }
  if (s.find_first_of("eE") != std::string_view::npos) {
    double ns = *ParseFiniteDouble(text) * 1e9;
    if (std::fabs(ns) >= 9.2e18) return std::nullopt;
    return static_cast<int64_t>(std::llround(ns));
  }
  size_t dot = s.find('.');
  std::string_view whole = s.substr(0, dot);
  std::string_view frac = dot == std::string_view::npos ? std::string_view() : s.substr(dot + 1);
  int64_t seconds = 0;
  if (!whole.empty()) {
    auto [end, ec] = std::from_chars(whole.data(), whole.data() + whole.size(), seconds);
    if (ec != std::errc() || end != whole.data() + whole.size()) return std::nullopt;
  }
  if (seconds > std::numeric_limits<int64_t>::max() / 1000000000 - 1) return std::nullopt;
  int64_t nanos = 0;
  int64_t scale = 100000000;
  for (size_t i = 0; i < frac.size(); ++i) {
    if (frac[i] < '0' || frac[i] > '9') return std::nullopt;
    if (scale > 0) {
      nanos += (frac[i] - '0') * scale;
      scale /= 10;
    }
  }
  int64_t total = seconds * 1000000000 + nanos;
  return negative ? -total : total;
}

}  // namespace bayline::cli
