// EWMA control chart (Roberts 1959) on a standardized input z (N(0, 1) while in control).
//
//   Z_i = (1 - lambda) Z_{i-1} + lambda z_i,   Z_0 = 0,   i = observations since the (re)start
//   sd(Z_i) in control = sigma_i = sqrt(lambda / (2 - lambda) * (1 - (1 - lambda)^(2 i)))
//   alarm when Z_i > L sigma_i (up) or Z_i < -L sigma_i (down)
//
// `limits` chooses sigma_i: kExact uses the time-varying value above (narrow limits at the start,
// so an early shift is caught early); kAsymptotic uses its limit sigma_inf = sqrt(lambda / (2 -
// lambda)) from the first observation. L is in units of sigma_i either way, so the same L gives a
// slightly smaller in-control ARL with exact limits (arl.h computes both; R spc's xewma.arl calls
// them limits = "vacl" and "fix").
// The event's statistic is |Z_i| (kBoth), Z_i (kUp) or -Z_i (kDown); its threshold is L sigma_i.
// Onset at an alarm: the observation after Z last was on the other side of zero (common practice,
// no source). Shift estimate: the mean of z over the observations since that onset.
// Alarm life cycle and hold-off: see chart_cycle.h; a restart sets Z = 0 and i = 0.
// Cost: O(1) per observation (one sqrt), no allocation. Thread safety: none.
#pragma once

#include <cstdint>

#include "estimators/core/report.h"
#include "estimators/core/state_codec.h"
#include "estimators/core/status.h"
#include "estimators/detect/alarm.h"
#include "estimators/detect/chart_cycle.h"

namespace bayline::est {

enum class EwmaLimits : std::uint8_t { kExact = 0, kAsymptotic = 1 };

struct EwmaOptions {
  double lambda = 0.1;  // smoothing weight in (0, 1]
  double L = 2.814;     // limit width in units of sigma_i, finite and > 0
  EwmaLimits limits = EwmaLimits::kExact;
  Direction direction = Direction::kBoth;  // kUp, kDown or kBoth
  std::int64_t holdoff = 0;                // observations ignored after an alarm, >= 0

  // Ok, or kInvalidConfig naming the field and value.
  Status Validate() const;
};

class Ewma {
 public:
  struct State {
    double z = 0;                 // Z_i
    double count = 0;             // i, observations since the (re)start
    double decay = 1;             // (1 - lambda)^i, kept as a running product
    std::int64_t onset_seq = -1;  // observation after Z last crossed zero
    double onset_time = kNaN;
    double run_sum = 0, run_count = 0;  // sum and number of z since the onset
    AlarmCycle cycle;

    void Pack(StateWriter& w) const;
    // Reads exactly its own values (a caller owning the whole buffer then checks r.status() to
    // refuse trailing values). kInvalidState on a short input or impossible values; *this may then
    // be partly overwritten, so unpack into a temporary (as a restore does).
    Status Unpack(StateReader& r);
  };

  // Precondition: options.Validate().ok() (asserted).
  explicit Ewma(const EwmaOptions& options);

  // Absorbs one standardized value. A non-finite z, or one whose new state would fail Validate
  // (an overflowing sum: the check Restore applies), is ignored: nothing changes and the event
  // carries the current statistic with raised = cleared = false. Never fails.
  DetectorEvent Update(double z, const ObservationMark& mark);

  void Reset();
  const EwmaOptions& options() const { return options_; }
  const State& state() const { return state_; }
  // Validates (finite, count an integer >= 0, decay in [0, 1]) and replaces; on error no change.
  Status Restore(const State& s);
  // The state invariants, shared by Restore and Update. Ok or kInvalidState.
  static Status Validate(const State& s);

  // sigma_i for this chart's limits after `count` observations (count >= 1).
  double LimitSd(double count, double decay) const;

 private:
  // Update without the invariant check (the chart's recursion).
  DetectorEvent Step(double z, const ObservationMark& mark);

  EwmaOptions options_;
  double asymptotic_var_;  // lambda / (2 - lambda)
  double decay_step_;      // 1 - lambda
  State state_;
};

}  // namespace bayline::est
