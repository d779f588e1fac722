// Page-Hinkley test on a standardized input z, measured against the running mean of the data seen
// since the (re)start, so it reacts to a change of level rather than to a constant offset.
//
//   zbar_n = (1/n) sum_{t<=n} z_t                      (running mean since the restart)
//   m+_n = sum_{t<=n} (z_t - zbar_t - delta),  PH+_n = m+_n - min_{0<=t<=n} m+_t   (m_0 = 0)
//   m-_n = sum_{t<=n} (zbar_t - z_t - delta),  PH-_n = m-_n - min_{0<=t<=n} m-_t
//   alarm when PH+_n > threshold (up) or PH-_n > threshold (down)
//
// Computed in O(1) as PH+_n = max(0, PH+_{n-1} + z_n - zbar_n - delta) (and likewise PH-), so no
// running sum can lose precision however long the stream. delta is the tolerated drift per
// observation (sd units); for a design shift D use delta = D / 2.
// No closed-form ARL is known to us for this statistic: calibration.h sets the threshold for a
// target in-control ARL by simulation (arl.h: SimulatePageHinkleyArl).
// Onset at an alarm: the observation after the last argmin of m (the excursion's start); shift
// estimate: +-(delta + PH / N) with N the excursion length (relative to the running mean).
// Alarm life cycle and hold-off: see chart_cycle.h; a restart clears the running mean too.
// Cost: O(1) per observation, no allocation. Thread safety: none.
#pragma once

#include <cstdint>

#include "estimators/core/report.h"
#include "estimators/core/state_codec.h"
#include "estimators/core/status.h"
#include "estimators/detect/alarm.h"
#include "estimators/detect/chart_cycle.h"
#include "estimators/detect/two_sided_excursion.h"

namespace bayline::est {

struct PageHinkleyOptions {
  double delta = 0.5;                      // tolerance per observation, finite and >= 0
  double threshold = 10.0;                 // decision threshold, finite and > 0
  Direction direction = Direction::kBoth;  // kUp, kDown or kBoth
  std::int64_t holdoff = 0;                // observations ignored after an alarm, >= 0

  // Ok, or kInvalidConfig naming the field and value.
  Status Validate() const;
};

class PageHinkley {
 public:
  // PH+ = upper, PH- = lower, with their excursions and the alarm cycle.
  struct State : TwoSidedExcursions {
    double count = 0;  // n, observations since the restart
    double mean = 0;   // zbar_n

    void Pack(StateWriter& w) const;
    // Reads exactly its own values (a caller owning the whole buffer then checks r.status() to
    // refuse trailing values). kInvalidState on a short input or impossible values; *this may then
    // be partly overwritten, so unpack into a temporary (as a restore does).
    Status Unpack(StateReader& r);
  };

  // Precondition: options.Validate().ok() (asserted).
  explicit PageHinkley(const PageHinkleyOptions& options);

  // Absorbs one standardized value. A non-finite z, or one whose new state would fail Validate
  // (an overflowing sum: the check Restore applies), is ignored: nothing changes and the event
  // carries the current statistic with raised = cleared = false. Never fails.
  DetectorEvent Update(double z, const ObservationMark& mark);

  void Reset();
  const PageHinkleyOptions& options() const { return options_; }
  const State& state() const { return state_; }
  // Validates and replaces; on error nothing changes.
  Status Restore(const State& s);
  // The state invariants, shared by Restore and Update. Ok or kInvalidState.
  static Status Validate(const State& s);

 private:
  // Update without the invariant check (the chart's recursion).
  DetectorEvent Step(double z, const ObservationMark& mark);
  void Restart();
  PageHinkleyOptions options_;
  State state_;
};

}  // namespace bayline::est
