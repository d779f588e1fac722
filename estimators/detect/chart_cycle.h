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

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstring>
#if defined(__SSE2__)
#include <emmintrin.h>
#endif
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

// Selects a when `take` is all ones, b when it is zero, without a branch (the chart statistics
// leave and return to zero unpredictably on in-control data, so branches would mispredict).
inline double SelectBits(std::uint64_t take, double a, double b) {
  std::uint64_t ua, ub;
  std::memcpy(&ua, &a, sizeof ua);
  std::memcpy(&ub, &b, sizeof ub);
  const std::uint64_t r = (ua & take) | (ub & ~take);
  double out;
  std::memcpy(&out, &r, sizeof out);
  return out;
}

// max(0, v) as one instruction where available: compilers otherwise may turn it into a branch.
inline double MaxZero(double v) {
#if defined(__SSE2__)
  return _mm_cvtsd_f64(_mm_max_sd(_mm_set_sd(v), _mm_setzero_pd()));  // v if v > 0, else +0
#else
  return std::max(0.0, v);
#endif
}

// One CUSUM-type side, C = max(0, C + x), with the length of its current excursion above zero and
// the mark of the excursion's first observation (the onset), branch-free.
inline void StepExcursion(double x, const ObservationMark& mark, double& c, double& count,
                          std::int64_t& onset_seq, double& onset_time) {
  c = MaxZero(c + x);
  // c >= +0.0 here, so c > 0 iff its bits are non-zero; testing the bits keeps the compiler from
  // splitting the path on the (unpredictable) floating-point comparison.
  std::uint64_t bits;
  std::memcpy(&bits, &c, sizeof bits);
  const bool positive = bits != 0;
  const std::uint64_t starts = 0 - static_cast<std::uint64_t>(positive & (count == 0.0));
  onset_seq = static_cast<std::int64_t>((static_cast<std::uint64_t>(mark.seq) & starts) |
                                        (static_cast<std::uint64_t>(onset_seq) & ~starts));
  onset_time = SelectBits(starts, mark.time, onset_time);
  count = (count + 1.0) * static_cast<double>(positive);
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
