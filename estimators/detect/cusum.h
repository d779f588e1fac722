// Two-sided tabular CUSUM (Page 1954) on a standardized input z (N(0, 1) while in control), with
// an optional fast-initial-response head start (Lucas & Crosier 1982).
//
//   C+_t = max(0, C+_{t-1} + z_t - k)        (upper side, watches for a rise)
//   C-_t = max(0, C-_{t-1} - z_t - k)        (lower side, watches for a fall)
//   C+_0 = C-_0 = s (head_start, 0 <= s < h)
//   alarm when C+_t > h (direction up) or C-_t > h (down); the statistic reported is the larger of
//   the watched sides.
//
// k is the reference value and h the decision interval, both in sd units of z. A CUSUM tuned for a
// shift of D sd uses k = D / 2 (see calibration.h for h from a target in-control ARL).
// Onset: the observation after the alarmed side was last at zero (the first observation of the
// current positive excursion; after a restart at a head start, the first observation after it).
// Shift estimate at an alarm: +(k + C+/N+) or -(k + C-/N-), N = observations in the excursion
// (common practice).
// Alarm life cycle and hold-off: see chart_cycle.h. After a crossing both sides restart at s when
// `restart_at_head_start` is true (Lucas & Crosier's FIR after a signal), else at 0.
// Cost: O(1) per observation, no allocation. Thread safety: none (one owner per object).
#pragma once

#include <cstdint>

#include "estimators/core/report.h"
#include "estimators/core/state_codec.h"
#include "estimators/core/status.h"
#include "estimators/detect/alarm.h"
#include "estimators/detect/chart_cycle.h"
#include "estimators/detect/two_sided_excursion.h"

namespace bayline::est {

struct CusumOptions {
  double k = 0.5;                          // reference value, sd units, finite and >= 0
  double h = 5.0;                          // decision interval, finite and > 0
  double head_start = 0.0;                 // s in [0, h); h / 2 is the usual FIR choice
  bool restart_at_head_start = true;       // restart at s after an alarm (false: restart at 0)
  Direction direction = Direction::kBoth;  // kUp, kDown or kBoth
  std::int64_t holdoff = 0;                // observations ignored after an alarm, >= 0

  // Ok, or kInvalidConfig naming the field and value.
  Status Validate() const;
};

class Cusum {
 public:
  // C+ = upper, C- = lower, with their excursions and the alarm cycle.
  struct State : TwoSidedExcursions {
    void Pack(StateWriter& w) const;
    // Reads exactly its own values (a caller owning the whole buffer then checks r.status() to
    // refuse trailing values). kInvalidState on a short input or impossible values; *this may then
    // be partly overwritten, so unpack into a temporary (as a restore does).
    Status Unpack(StateReader& r);
  };

  // Precondition: options.Validate().ok() (asserted). Starts at C+ = C- = head_start.
  explicit Cusum(const CusumOptions& options);

  // Absorbs one standardized value. A non-finite z, or one whose new state would fail Validate
  // (an overflowing sum: the check Restore applies), is ignored: nothing changes and the event
  // carries the current statistic with raised = cleared = false. Never fails.
  DetectorEvent Update(double z, const ObservationMark& mark);

  // Back to the initial state (C+ = C- = head_start, no active alarm).
  void Reset();

  const CusumOptions& options() const { return options_; }
  const State& state() const { return state_; }
  // Validates `s` (finite, non-negative sides, integer counts, valid cycle) and replaces the state;
  // on error nothing changes.
  Status Restore(const State& s);
  // The state invariants, shared by Restore and Update. Ok or kInvalidState.
  static Status Validate(const State& s);

 private:
  // Update without the invariant check (the chart's recursion).
  DetectorEvent Step(double z, const ObservationMark& mark);
  void Restart();

  CusumOptions options_;
  State state_;
};

}  // namespace bayline::est
