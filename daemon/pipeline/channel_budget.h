// ChannelBudget: limits.max_channels for a whole daemon, shared by the pipelines of its workers.
//
// Why one shared count rather than a share of the limit per worker: channels reach workers by the
// hash of their name, so fixed shares would fill unevenly (one worker refusing new channels while
// the others have room, the daemon-wide total stopping short of the limit) and a snapshot written
// with N workers would not fit the shares of M workers after a restart. A shared atomic count is
// exact whatever the routing: a channel takes one unit when it is registered (TryReserve) and gives
// it back when it is forgotten (reset, reload, its pipeline destroyed). Only channel creation and
// removal touch it, never the per-observation path of an existing channel.
//
// The limit may be lowered below the count (reload): channels held are kept, new ones are refused
// until enough are forgotten.
//
// Thread safety: every member may be called from any thread.
#pragma once

#include <atomic>
#include <cstdint>

#include "daemon/pipeline/fleet_budget.h"

namespace bayline::pipeline {

class ChannelBudget {
 public:
  explicit ChannelBudget(uint64_t limit) : limit_(limit) {}
  ChannelBudget(const ChannelBudget&) = delete;
  ChannelBudget& operator=(const ChannelBudget&) = delete;

  // Takes `n` units if all fit under the limit; otherwise takes none and returns false.
  bool TryReserve(uint64_t n = 1) {
    uint64_t used = used_.load(std::memory_order_relaxed);
    do {
      const uint64_t limit = limit_.load(std::memory_order_relaxed);
      if (used > limit || n > limit - used) return false;
    } while (!used_.compare_exchange_weak(used, used + n, std::memory_order_relaxed));
    return true;
  }
  void Release(uint64_t n = 1) { used_.fetch_sub(n, std::memory_order_relaxed); }

  // Whether one more channel would fit now (a hint: TryReserve decides).
  bool HasRoom() const {
    return used_.load(std::memory_order_relaxed) < limit_.load(std::memory_order_relaxed);
  }
  uint64_t used() const { return used_.load(std::memory_order_relaxed); }
  uint64_t limit() const { return limit_.load(std::memory_order_relaxed); }
  void set_limit(uint64_t limit) { limit_.store(limit, std::memory_order_relaxed); }

  // The channel counts of the fleet false-alarm budgets (fleet_budget.h), shared the same way.
  FleetPools& fleet() { return fleet_; }

 private:
  std::atomic<uint64_t> used_{0};
  std::atomic<uint64_t> limit_;
  FleetPools fleet_;
};

}  // namespace bayline::pipeline
