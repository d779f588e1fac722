// AlarmCycle: the raised / cleared life cycle of alarm.h, shared by the control charts in this
// library (cusum, ewma, page_hinkley, glr).
//
// Per observation, with the chart's own statistic S and threshold h:
//   * while `holdoff_left` > 0 the observation is ignored: S is not updated, holdoff_left -= 1;
//   * otherwise S is updated; S > h is a crossing. The chart then restarts S (to 0, or to its
//     head start) and sets holdoff_left = holdoff. The first crossing raises the alarm (`raised`);
//     a crossing while the alarm is still active restarts S and the hold-off without a new raise;
//   * an active alarm clears on the first updated observation with S <= h (`cleared`), so every
//     raise is followed by exactly one clear.
#pragma once

#include <cmath>
#include <cstdint>
#include <string>

#include "estimators/core/state_codec.h"
#include "estimators/core/status.h"
#include "estimators/detect/alarm.h"

namespace bayline::est {

struct AlarmCycle {
  bool active = false;      // an alarm was raised and has not cleared yet
  double holdoff_left = 0;  // observations still to ignore (an integer held in a double)

  void Pack(StateWriter& w) const {
    w.Put(active);
    w.Put(holdoff_left);
  }
  bool Unpack(StateReader& r) { return r.Get(active) && r.Get(holdoff_left); }
  bool Valid() const {
    return holdoff_left >= 0 && holdoff_left <= 9.007199254740992e15 &&
           holdoff_left == std::floor(holdoff_left);
  }
};

// Shared validation of a hold-off option.
inline Status ValidateHoldoff(std::int64_t holdoff) {
  if (holdoff < 0) {
    return Status::Error(ErrorCode::kInvalidConfig,
                         "holdoff must be >= 0 observations, got " + std::to_string(holdoff));
  }
  return Status::Ok();
}

// True when a chart watching `d` watches `side` (kUp or kDown).
inline bool WatchesSide(Direction d, Direction side) {
  return (static_cast<unsigned>(d) & static_cast<unsigned>(side)) != 0;
}

// Charts watch kUp, kDown or kBoth.
inline Status ValidateChartDirection(Direction d) {
  if (d == Direction::kUp || d == Direction::kDown || d == Direction::kBoth) return Status::Ok();
  return Status::Error(ErrorCode::kInvalidConfig, "direction must be up, down or both");
}

}  // namespace bayline::est
