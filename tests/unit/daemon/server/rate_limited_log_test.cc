// Per-reason rate limiting of log lines.
#include "daemon/server/rate_limited_log.h"

#include <gtest/gtest.h>

namespace bayline::server {
namespace {

TEST(RateLimitedLogTest, AllowsNPerSecondPerReasonAndCountsTheRest) {
  RateLimitedLog log(3);
  const auto t0 = RateLimitedLog::Clock::time_point{} + std::chrono::hours(1);
  int allowed = 0;
  for (int i = 0; i < 10; ++i) allowed += log.Allow("malformed_frame", t0) ? 1 : 0;
  EXPECT_EQ(allowed, 3);
  EXPECT_EQ(log.Suppressed("malformed_frame"), 7u);
  // Another reason has its own budget.
  EXPECT_TRUE(log.Allow("oversized_frame", t0));
  // A new second opens a new window and reports (then forgets) the suppressed count.
  EXPECT_TRUE(log.Allow("malformed_frame", t0 + std::chrono::milliseconds(1000)));
  EXPECT_EQ(log.Suppressed("malformed_frame"), 0u);
  EXPECT_FALSE(log.Allow("oversized_frame", t0 + std::chrono::milliseconds(10)) &&
               log.Allow("oversized_frame", t0 + std::chrono::milliseconds(20)) &&
               log.Allow("oversized_frame", t0 + std::chrono::milliseconds(30)));
}

}  // namespace
}  // namespace bayline::server
