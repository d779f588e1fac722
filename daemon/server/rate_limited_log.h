// Rate limiting for per-message log lines: at most `per_second` lines per reason per second; the
// rest are counted and reported in one "suppressed K" line when the reason next logs (or on
// Flush). Bad input from outside can arrive at a million frames a second; the log must not.
//
// Thread safety: none. Each thread that logs per-message errors owns one RateLimitedLog.
#pragma once

#include <spdlog/spdlog.h>

#include <chrono>
#include <cstdint>
#include <string>
#include <string_view>
#include <unordered_map>

namespace bayline::server {

class RateLimitedLog {
 public:
  using Clock = std::chrono::steady_clock;

  explicit RateLimitedLog(uint32_t per_second = 5) : per_second_(per_second) {}

  // True when a line for `reason` may be written now (the caller then writes it); false when it
  // is suppressed. Opening a new one-second window first logs how many the last one suppressed.
  bool Allow(std::string_view reason, Clock::time_point now = Clock::now());

  // Logs a pending "suppressed" summary for every reason and forgets it.
  void Flush();

  // Lines suppressed for `reason` since its last summary (for tests).
  uint64_t Suppressed(std::string_view reason) const;

 private:
  struct Window {
    Clock::time_point start{};
    uint32_t written = 0;
    uint64_t suppressed = 0;
  };
  static void Summarize(const std::string& reason, Window& window);

  uint32_t per_second_;
  std::unordered_map<std::string, Window> windows_;
};

}  // namespace bayline::server
