#include "daemon/server/rate_limited_log.h"

namespace bayline::server {

bool RateLimitedLog::Allow(std::string_view reason, Clock::time_point now) {
  auto it = windows_.find(std::string(reason));
  if (it == windows_.end()) it = windows_.emplace(std::string(reason), Window{now, 0, 0}).first;
  Window& w = it->second;
  if (now - w.start >= std::chrono::seconds(1)) {
    Summarize(it->first, w);
    w.start = now;
    w.written = 0;
  }
  if (w.written < per_second_) {
    ++w.written;
    return true;
  }
  ++w.suppressed;
  return false;
}

void RateLimitedLog::Flush() {
  for (auto& [reason, window] : windows_) Summarize(reason, window);
}

uint64_t RateLimitedLog::Suppressed(std::string_view reason) const {
  auto it = windows_.find(std::string(reason));
  return it == windows_.end() ? 0 : it->second.suppressed;
}

void RateLimitedLog::Summarize(const std::string& reason, Window& window) {
  if (window.suppressed == 0) return;
  spdlog::warn("{}: suppressed {} similar messages", reason, window.suppressed);
  window.suppressed = 0;
}

}  // namespace bayline::server
