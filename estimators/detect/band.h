// Tolerance band on one estimated parameter: the acceptance check "is the parameter inside
// [lo, hi] with the report's confidence?".
//
// Input per observation: a ParameterReport (core/report.h) and the index i of the watched
// parameter, with interval [L, U] = [report.lower[i], report.upper[i]] at report.level.
//   gap = max(lo - U, L - hi)                    (> 0 iff the interval lies wholly outside the
//   band) raised  when gap > 0 (statistic = gap, threshold = 0); direction kUp if L > hi, kDown if
//   U < lo; cleared when the interval overlaps the shrunk band [lo + h, hi - h] again (h =
//   `hysteresis`
//           >= 0, 2 h <= hi - lo), i.e. gap_h = max(lo + h - U, L - (hi - h)) <= 0.
// So with level 0.95 an alarm says the parameter is outside the band at 95% confidence (one-sided
// 97.5% per side for an equal-tailed interval). If the true value sits inside the band by several
// standard errors an alarm needs an interval error of that many standard errors (simulated in the
// unit tests).
// Hold-off: after a raise the next `holdoff` reports are ignored (no raise, no clear).
// Onset: the observation from which the point estimate report.value[i] has been outside [lo, hi]
// without interruption (the current one if that is unknown); shift = value - nearest band edge
// (signed, in the parameter's units).
// A report with identifiable == false, or with a NaN bound at the index (e.g. no degrees of freedom
// for a standard error yet), is "nothing yet": the event has statistic NaN, no raise, no clear,
// and only the hold-off counter advances. An infinite bound is a valid (unbounded) interval.
//
// Thread safety: none. No heap allocation in Update().
#pragma once

#include <cstdint>

#include "estimators/core/report.h"
#include "estimators/core/state_codec.h"
#include "estimators/core/status.h"
#include "estimators/detect/alarm.h"

namespace bayline::est {

class ToleranceBand {
 public:
  struct Options {
    int parameter = 0;  // index into the report's vectors, >= 0
    double lo = -1.0;   // band, finite, lo < hi
    double hi = 1.0;
    double hysteresis = 0.0;  // h >= 0 with 2 h <= hi - lo
    int holdoff = 0;          // >= 0
    Status Validate() const;  // ok or kInvalidConfig naming the field
  };
  struct State {
    bool alarm_active = false;
    double holdoff_left = 0;
    bool value_outside = false;                 // estimate outside [lo, hi] at the last report
    double outside_seq = -1, outside_time = 0;  // mark where it went outside
    void Pack(StateWriter& w) const;
    Status Unpack(StateReader& r);
  };

  explicit ToleranceBand(const Options& options);  // precondition: Validate().ok() (asserted)

  // Rejections (nothing changes, *event untouched): kOutOfDomain when the report has no parameter
  // `parameter`; kNonFinite when a report with an interval has a non-finite value at that index;
  // kOutOfDomain when lower > upper.
  Status Update(const ParameterReport& report, const ObservationMark& mark, DetectorEvent* event);

  const Options& options() const { return options_; }
  const State& state() const { return state_; }
  Status Restore(const State& s);  // validates (holdoff_left in [0, holdoff]), then replaces

 private:
  Options options_;
  State state_;
};

}  // namespace bayline::est
