// ObservationRate: a channel's observation rate r (observations per day), estimated from the
// time stamps of its accepted observations, for the fleet false-alarm budget (fleet_budget.h).
//
// Time stamps are Sample::time: seconds since the epoch, from Observation.time_ns, or the arrival
// time at the daemon when the producer sent none (`bayline replay` gives untimed rows arrival 0,
// so they carry no rate information).
//
// Estimator: an exponentially weighted mean of the inter-arrival intervals dt_n = t_n - t_{n-1},
//
//   m_n = m_{n-1} + w_n (min(dt_n, 4 m_{n-1}) - m_{n-1}),   w_n = max(1 / n, 1 / 32),
//   r = 86400 / m (observations per day),
//
// i.e. the plain mean of the first 32 intervals, then an EWMA with a memory of about 32
// intervals, so the estimate follows a rate that changes. Robustness:
//   * an observation whose time is not after the last one (untimed, late or equal time stamps)
//     is no interval: it changes nothing;
//   * once the rate is known, an interval is capped at 4 m before it enters the mean, so one long
//     silence (an outage, a restart) raises m by at most 3/32 (about 9 %) instead of making the
//     channel look slow and its ARL0 small (too many false alarms). A genuine slow-down still gets
//     through at up to 9 % per observation (a 30-fold slow-down in about 40 observations); a
//     speed-up is followed at the EWMA's own pace (too high a rate errs on the safe side: a
//     larger ARL0, fewer false alarms).
// The rate is known once kMinIntervals intervals are absorbed; before that known() is false.
// In control with exponential intervals the relative sd of m is sqrt(w / (2 - w)), about 13 %
// once warmed (common practice, no source), and r = 1 / m is then biased high by about 1.6 %.
//
// State: three doubles (packed with the detector, fleet_budget.h). Cost O(1), no allocation.
#pragma once

#include <algorithm>
#include <cmath>

#include "estimators/core/report.h"
#include "estimators/core/state_codec.h"
#include "estimators/core/status.h"

namespace bayline::pipeline {

class ObservationRate {
 public:
  static constexpr double kMinIntervals = 8;
  static constexpr double kWeight = 1.0 / 32;
  static constexpr double kIntervalCap = 4;
  static constexpr double kSecondsPerDay = 86400;

  struct State {
    double last_time = est::kNaN;  // seconds; NaN before the first time stamp
    double mean_interval = 0;      // m, seconds (0 before the first interval)
    double intervals = 0;          // n, intervals absorbed (an integer held in a double)
  };

  // Absorbs the time stamp of one accepted observation (seconds).
  void Observe(double time_s) {
    if (!std::isfinite(time_s)) return;
    if (std::isnan(s_.last_time)) {
      s_.last_time = time_s;
      return;
    }
    double dt = time_s - s_.last_time;
    if (!(dt > 0)) return;
    s_.last_time = time_s;
    if (known()) dt = std::min(dt, kIntervalCap * s_.mean_interval);
    s_.intervals += 1;
    const double w = std::max(1.0 / s_.intervals, kWeight);
    s_.mean_interval += w * (dt - s_.mean_interval);
  }

  bool known() const { return s_.intervals >= kMinIntervals; }
  // Observations per day; meaningful when known().
  double per_day() const { return kSecondsPerDay / s_.mean_interval; }

  const State& state() const { return s_; }
  void Pack(est::StateWriter& w) const {
    w.Put(s_.last_time);
    w.Put(s_.mean_interval);
    w.Put(s_.intervals);
  }
  // kInvalidState (nothing changed) unless: last_time NaN or finite; mean_interval finite, >= 0,
  // and > 0 once an interval was absorbed; intervals a non-negative integer (< 2^53), 0 before a
  // first time stamp.
  est::Status Unpack(est::StateReader& r) {
    State s;
    if (!(r.Get(s.last_time) && r.Get(s.mean_interval) && r.Get(s.intervals))) return r.status();
    const bool ok = (std::isnan(s.last_time) || std::isfinite(s.last_time)) &&
                    std::isfinite(s.mean_interval) && s.mean_interval >= 0 && s.intervals >= 0 &&
                    s.intervals <= 9.007199254740992e15 && s.intervals == std::floor(s.intervals) &&
                    (s.intervals == 0 || s.mean_interval > 0) &&
                    (!std::isnan(s.last_time) || s.intervals == 0);
    if (!ok) return est::Status::Error(est::ErrorCode::kInvalidState, "observation rate state");
    s_ = s;
    return est::Status::Ok();
  }

 private:
  State s_;
};

}  // namespace bayline::pipeline
