// TwoSidedExcursions: the pair of one-sided CUSUM-type sums that cusum and page_hinkley share, with
// their excursion lengths, onsets and the chart's alarm cycle (chart_cycle.h).
//
//   S+_t = max(0, S+_{t-1} + a_t)   (upper side; a_t = z_t - k for cusum, z_t - zbar_t - delta for
//   S-_t = max(0, S-_{t-1} + b_t)    lower side; b_t = -z_t - k,   zbar_t - z_t - delta)
//   crossing when a watched side exceeds the threshold h. At a crossing the event names the side,
//   its onset (the first observation of its current excursion) and the shift estimate
//   +-(r + S / N), with r the chart's reference (k or delta) and N the excursion length (common
//   practice, no source).
//
// Packed layout (unchanged from the charts' own): S+ S- N+ N- onset_seq+ onset_time+ onset_seq-
// onset_time- cycle. Cost: O(1), branch-free on the sums. Thread safety: none.
#pragma once

#include <algorithm>
#include <cmath>
#include <cstdint>

#include "estimators/core/state_codec.h"
#include "estimators/detect/alarm.h"
#include "estimators/detect/chart_cycle.h"

namespace bayline::est {

struct TwoSidedExcursions {
  double upper = 0, lower = 0;              // S+ and S-
  double upper_count = 0, lower_count = 0;  // N+, N-: observations in the current excursion
  std::int64_t upper_onset_seq = -1, lower_onset_seq = -1;
  double upper_onset_time = kNaN, lower_onset_time = kNaN;
  AlarmCycle cycle;

  void PackSides(StateWriter& w) const {
    w.Put(upper);
    w.Put(lower);
    w.Put(upper_count);
    w.Put(lower_count);
    w.Put(static_cast<double>(upper_onset_seq));
    w.Put(upper_onset_time);
    w.Put(static_cast<double>(lower_onset_seq));
    w.Put(lower_onset_time);
    cycle.Pack(w);
  }
  // Reads exactly the values PackSides wrote; false on a short input (r.status() says why).
  bool UnpackSides(StateReader& r) {
    double us = 0, ls = 0;
    const bool ok = r.Get(upper) && r.Get(lower) && r.Get(upper_count) && r.Get(lower_count) &&
                    r.Get(us) && r.Get(upper_onset_time) && r.Get(ls) && r.Get(lower_onset_time) &&
                    cycle.Unpack(r);
    upper_onset_seq = static_cast<std::int64_t>(us);
    lower_onset_seq = static_cast<std::int64_t>(ls);
    return ok;
  }
  // Finite, non-negative sums with integer lengths and a valid cycle.
  bool SidesValid() const {
    return ValidSide(upper, upper_count) && ValidSide(lower, lower_count) && cycle.Valid();
  }

  // The larger of the watched sides.
  double Statistic(Direction watched) const {
    switch (watched) {
      case Direction::kUp:
        return upper;
      case Direction::kDown:
        return lower;
      default:
        return std::max(upper, lower);
    }
  }

  // Whether this observation is ignored (non-finite z, or inside the hold-off, which it counts
  // down); then *ev carries the current statistic only.
  bool SkipObservation(double z, Direction watched, DetectorEvent* ev) {
    if (std::isfinite(z) && cycle.holdoff_left <= 0.0) return false;
    if (std::isfinite(z)) cycle.holdoff_left -= 1.0;
    ev->statistic = Statistic(watched);
    return true;
  }

  // Adds a to the upper side and b to the lower side.
  void Step(double a, double b, const ObservationMark& mark) {
    StepExcursion(a, mark, upper, upper_count, upper_onset_seq, upper_onset_time);
    StepExcursion(b, mark, lower, lower_count, lower_onset_seq, lower_onset_time);
  }

  // After Step: fills the event's statistic, and on a crossing of `threshold` its side, onset and
  // shift, raises (once per active alarm) and starts the hold-off; clears an active alarm when no
  // watched side crosses. Returns true on a crossing: the caller then restarts its sums.
  bool Judge(Direction watched, double threshold, double reference, std::int64_t holdoff,
             DetectorEvent* ev) {
    ev->statistic = Statistic(watched);
    const bool up = WatchesSide(watched, Direction::kUp) && upper > threshold;
    const bool down = WatchesSide(watched, Direction::kDown) && lower > threshold;
    if (!up && !down) {
      if (cycle.active) {
        ev->cleared = true;
        cycle.active = false;
      }
      return false;
    }
    // When both cross on one observation (possible only for a tiny threshold), report the larger.
    const bool use_up = up && (!down || upper >= lower);
    ev->direction = use_up ? Direction::kUp : Direction::kDown;
    ev->onset_seq = use_up ? upper_onset_seq : lower_onset_seq;
    ev->onset_time = use_up ? upper_onset_time : lower_onset_time;
    ev->shift = use_up ? reference + upper / std::max(1.0, upper_count)
                       : -(reference + lower / std::max(1.0, lower_count));
    ev->raised = !cycle.active;
    cycle.active = true;
    cycle.holdoff_left = static_cast<double>(holdoff);
    return true;
  }

  // Both sums back to `start` with empty excursions; the alarm cycle is kept.
  void RestartSides(double start) {
    upper = lower = start;
    upper_count = lower_count = 0.0;
  }

 private:
  static bool ValidSide(double c, double count) {
    return std::isfinite(c) && c >= 0.0 && std::isfinite(count) && count >= 0.0 &&
           count == std::floor(count);
  }
};

}  // namespace bayline::est
