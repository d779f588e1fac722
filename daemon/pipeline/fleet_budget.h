// Fleet false-alarm budget: a detector states `false_alarms_per_day` B instead of arl0, and each
// channel gets its own in-control ARL from its own observation rate.
//
// Arithmetic. A detector with in-control ARL0_i (observations between false alarms) on a channel
// observed r_i times a day raises r_i / ARL0_i false alarms a day. With N channels in the budget
// (the channels the rule holds in the whole daemon, for a detector's own budget; every
// (channel, detector) pair that inherits the daemon's budget, for
// DaemonConfig.false_alarms_per_day) and each given an equal share B / N:
//
//   ARL0_i = N r_i / B,   so   sum_i r_i / ARL0_i = B.
//
// ARL0_i is clamped to [kFleetMinArl0, kFleetMaxArl0] (the Markov-chain calibration's range); a
// clamp at the top gives the fleet fewer false alarms than B, at the bottom more (the budget asks
// for a false alarm every few observations).
//
// Per channel: the rate (observation_rate.h) and N (a daemon-wide atomic count per budget, below)
// are read at every observation of a budgeted detector; the threshold is recalibrated only when
// the target ARL0 has moved more than kFleetHysteresis (5 %) from the ARL0 in force, so a fleet
// that grows by 10 % recalibrates each channel about twice, and a steady fleet almost never. A
// recalibration costs one table look-up (ThresholdTable: interpolation in ln ARL0 in a table
// computed once per chart setting for the whole daemon, FleetPools) and the rebuild of the chart's
// options (a few ns); the check itself one atomic load and two comparisons. Until the channel's
// rate is known (its first ObservationRate::kMinIntervals intervals) its ARL0 is kFleetMaxArl0:
// practically no false alarms, only a gross shift is caught. The channel counts in N from its first
// observation.
//
// Supported detectors: cusum (h per channel, k fixed by the rule) and ewma (L per channel, lambda
// fixed by the rule, chosen for a shift at ARL0 = kFleetDesignArl0 unless given). page_hinkley and
// glr are calibrated by simulation, limited to arl0 <= 1e4 (detector_setup.h), far below the
// ARL0 of a fleet's channels, and bocpd has no ARL calibration: ValidateConfig rejects
// false_alarms_per_day for them (and for raw h / limit, which would override it).
//
// Thread safety: FleetPools is shared by the daemon's pipelines (every member may be called from
// any thread); everything else belongs to one pipeline.
#pragma once

#include <atomic>
#include <cstdint>
#include <deque>
#include <functional>
#include <map>
#include <memory>
#include <mutex>
#include <string>
#include <vector>

#include "bayline/v1/config.pb.h"
#include "daemon/pipeline/observation_rate.h"
#include "estimators/core/status.h"
#include "estimators/detect/cusum.h"
#include "estimators/detect/ewma.h"

namespace bayline::pipeline {

inline constexpr double kFleetMinArl0 = 10;
inline constexpr double kFleetMaxArl0 = 1e7;
inline constexpr double kFleetDesignArl0 = 1e5;
inline constexpr double kFleetHysteresis = 0.05;

// N r / B, unclamped (the CLI reports it as is).
inline double FleetArl0(double channels, double rate_per_day, double false_alarms_per_day) {
  return channels * rate_per_day / false_alarms_per_day;
}

// The threshold (cusum h, ewma L) as a function of ARL0 for a rule's chart. Built once per rule:
// the thresholds h_lo, h_hi for ARL0 = kFleetMinArl0 and kFleetMaxArl0 are solved by the
// Markov-chain calibration (calibration.h), the range widened by kMargin of its width on each
// side, then ln ARL(h) is evaluated (arl.h, one chain solve each, no root search) on kPoints
// thresholds evenly spaced over it. A look-up
// inverts that table: binary search in ln ARL, linear interpolation in h (ln ARL is close to
// linear in h: for cusum ARL grows like exp(2 k h), common practice, no source). Accuracy against
// direct calibration is measured in fleet_budget_test (a few 1e-5 in h and relative ARL0 for
// cusum). Cost: about 2 root searches + kPoints ARL evaluations to build (about 1.5 s for cusum on
// the 2-core test machine), O(log kPoints) per look-up.
class ThresholdTable {
 public:
  static constexpr int kPoints = 96;
  static constexpr double kMargin = 0.01;

  // cusum: keeps o.k, o.direction, and the head start as the fraction `head_start_fraction` of h.
  static est::Status ForCusum(const est::CusumOptions& o, double head_start_fraction,
                              std::shared_ptr<const ThresholdTable>* out);
  // ewma: keeps o.lambda, o.limits, o.direction.
  static est::Status ForEwma(const est::EwmaOptions& o, std::shared_ptr<const ThresholdTable>* out);

  // The threshold for `arl0` (clamped to the table's range).
  double Threshold(double arl0) const;
  std::size_t size() const { return thresholds_.size(); }

 private:
  // kNumericalFailure unless ln ARL is finite and increasing over the grid.
  static est::Status Build(double lo, double hi, const std::function<double(double)>& log_arl,
                           std::shared_ptr<const ThresholdTable>* out);
  std::vector<double> thresholds_;  // evenly spaced in [h_lo, h_hi]
  std::vector<double> log_arl_;     // ln ARL0 at each, increasing
};

enum class FleetChart { kCusum, kEwma };

// What a budgeted detector of a rule shares with its channels (DetectorSetup::fleet).
struct FleetBudgetSetup {
  double false_alarms_per_day = 0;  // B
  FleetChart chart = FleetChart::kCusum;
  est::CusumOptions cusum;         // the rule's calibration: k, direction (h is per channel)
  est::EwmaOptions ewma;           // lambda, limits, direction (L is per channel)
  double head_start_fraction = 0;  // cusum
  // Set by BindFleetBudget (RuleSet::Build):
  std::shared_ptr<const ThresholdTable> table;  // threshold against ARL0
  std::atomic<int64_t>* members = nullptr;      // N of its budget
  std::shared_ptr<std::atomic<int64_t>> own;    // the counter when no FleetPools is given
};

// The table of a setup's chart (ThresholdTable::ForCusum / ForEwma).
est::Status BuildThresholdTable(const FleetBudgetSetup& setup,
                                std::shared_ptr<const ThresholdTable>* out);

// What the budgets of a daemon share: shared by all its pipelines (ChannelBudget carries it).
//   Members: N of each budget, so N counts every worker's channels. A budget is named by its key
//     (FleetPoolKey): "daemon" for the config-level budget, or the rule's match pattern and
//     detector index. Counters are never removed, so their addresses stay valid for the
//     FleetPools' lifetime.
//   Table: threshold tables by chart settings, built once for all workers and reloads (a cusum
//     table costs about a second).
class FleetPools {
 public:
  std::atomic<int64_t>* Members(const std::string& key);
  // The cached table for the setup's chart settings, built on first use (under the lock: other
  // callers wait); a failed build is not cached.
  est::Status Table(const FleetBudgetSetup& setup, std::shared_ptr<const ThresholdTable>* out);

 private:
  std::mutex mutex_;
  std::map<std::string, std::atomic<int64_t>*> index_;
  std::deque<std::atomic<int64_t>> counters_;
  std::map<std::string, std::shared_ptr<const ThresholdTable>> tables_;
};

// One channel's membership of a budget: counts it in N while it lives.
class FleetMembership {
 public:
  FleetMembership() = default;
  explicit FleetMembership(std::atomic<int64_t>* members) { Join(members); }
  ~FleetMembership() { Leave(); }
  FleetMembership(const FleetMembership&) = delete;
  FleetMembership& operator=(const FleetMembership&) = delete;
  void Join(std::atomic<int64_t>* members) {
    Leave();
    members_ = members;
    if (members_ != nullptr) members_->fetch_add(1, std::memory_order_relaxed);
  }
  std::atomic<int64_t>* members() const { return members_; }

 private:
  void Leave() {
    if (members_ != nullptr) members_->fetch_sub(1, std::memory_order_relaxed);
    members_ = nullptr;
  }
  std::atomic<int64_t>* members_ = nullptr;
};

// The budget state of one channel's detector: its rate, the ARL0 and threshold in force.
class FleetChannelState {
 public:
  // What is packed: [last_time, mean_interval, intervals, arl0, threshold].
  struct Values {
    ObservationRate rate;
    double arl0 = kFleetMaxArl0;
    double threshold = 0;
    void Pack(est::StateWriter& w) const;
    // kInvalidState (nothing changed) on a malformed state or an ARL0 / threshold out of range.
    est::Status Unpack(est::StateReader& r);
  };

  // Joins the setup's budget (counts in N) at ARL0 = kFleetMaxArl0.
  explicit FleetChannelState(const FleetBudgetSetup& setup);

  // Absorbs the time of one observation; true when the threshold in force changed (then
  // threshold() holds the new one). Follows the setup's budget if it changed (reload).
  bool Observe(const FleetBudgetSetup& setup, double time_s);

  double arl0() const { return v_.arl0; }
  double threshold() const { return v_.threshold; }
  double head_start_fraction() const { return head_start_fraction_; }
  const ObservationRate& rate() const { return v_.rate; }
  const Values& values() const { return v_; }
  void set_values(const Values& v) { v_ = v; }

 private:
  Values v_;
  double head_start_fraction_ = 0;
  FleetMembership membership_;
};

// The spec of a detector with the daemon's budget applied: when config.false_alarms_per_day > 0
// and the detector is a cusum / ewma stating neither arl0, false_alarms_per_day nor a raw
// threshold (h, limit), it gets false_alarms_per_day and *inherited is true.
bayline::v1::DetectorSpec WithFleetDefault(const bayline::v1::DaemonConfig& config,
                                           const bayline::v1::DetectorSpec& spec, bool* inherited);

// Checks the budget fields of a detector spec (ValidateConfig); `path` names it.
est::Status ValidateFleetBudget(const bayline::v1::DetectorSpec& spec, const std::string& path);

// The budget of a calibrated cusum (k, direction, head start from `cusum`) or ewma (lambda,
// limits, direction from `ewma`) detector (CalibrateDetector), without its table and N: usable
// only once bound (BindFleetBudget).
std::shared_ptr<const FleetBudgetSetup> MakeFleetBudget(double false_alarms_per_day,
                                                        FleetChart chart,
                                                        const est::CusumOptions& cusum,
                                                        const est::EwmaOptions& ewma);

// Completes a budgeted setup: its N (the counter of `key` in `pools`, or a counter of its own when
// pools is nullptr) and its threshold table (cached in pools, or built). Errors: the table's.
est::Status BindFleetBudget(const FleetBudgetSetup& setup, FleetPools* pools,
                            const std::string& key, std::shared_ptr<const FleetBudgetSetup>* out);
std::string FleetPoolKey(bool inherited, const std::string& rule_match, int detector_index);

}  // namespace bayline::pipeline
