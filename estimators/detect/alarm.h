// DetectorEvent: what every change detector reports after each observation it watches.
//
// Detectors are pure state machines: they see one input per observation (a standardized
// innovation, a raw sample, a recursive residual or a parameter report, depending on the
// detector), together with the observation's sequence number and time, which they only carry
// through so that an alarm can name where the change began.
//
// Alarm life cycle, shared by all detectors:
//   * `raised` is true on the observation whose statistic crosses the threshold. The detector then
//     restarts its statistic and ignores `holdoff` observations (configurable per detector).
//   * `cleared` is true on the first observation after the hold-off at which the restarted
//   statistic
//     is back in control; a raised alarm is always followed by exactly one clear.
#pragma once

#include <cstdint>
#include <limits>

namespace bayline::est {

enum class Direction : std::uint8_t { kNone = 0, kUp = 1, kDown = 2, kBoth = 3 };

struct DetectorEvent {
  bool raised = false;   // the statistic crossed the threshold on this observation
  bool cleared = false;  // a previously raised alarm ended on this observation
  double statistic = std::numeric_limits<double>::quiet_NaN();  // decision statistic now
  double threshold = std::numeric_limits<double>::quiet_NaN();  // what it is compared with
  Direction direction = Direction::kNone;  // side that crossed (raised) or that is watched
  // Estimated start of the change: sequence number and time of the first observation believed to
  // be after it (for CUSUM the observation after the statistic last left zero; for BOCPD the MAP
  // change point). -1 / NaN when the detector cannot tell.
  std::int64_t onset_seq = -1;
  double onset_time = std::numeric_limits<double>::quiet_NaN();
  // Estimated size of the change in the watched quantity's units (sd units for standardized
  // innovations). NaN when unknown.
  double shift = std::numeric_limits<double>::quiet_NaN();
};

// Identity of the observation a detector sees, carried through for onset reporting.
struct ObservationMark {
  std::int64_t seq = -1;
  double time = std::numeric_limits<double>::quiet_NaN();
};

}  // namespace bayline::est
