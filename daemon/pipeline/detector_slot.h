// DetectorSlot: one detector of a channel with its standardizer and the bookkeeping the control
// API reports (last statistic, alarms raised, last alarm).
//
// What each detector watches (DetectorSetup::watch is the index of the watched estimator). The
// charts (cusum, ewma, page_hinkley, glr) and bocpd (normal-gamma segment model) all read one score
// z per observation, N(0, 1) i.i.d. while the channel is in control:
//   family                      mode phase2                   otherwise (any watched estimator
//                                                             unless said)
//   poisson, binomial,          the same transform under      est::ExactScoreStandardizer: the
//   exponential, gamma          the target law (exact_scores  conditional PIT on the sufficient
//                               .h): poisson rate target_mean statistic (exact from the 2nd
//                               x exposure, binomial p =      observation; gamma from the 3rd,
//                               target_mean, exponential /    nearly exact), randomized for counts
//                               gamma mean target_mean (gamma
//                               sd target_sd)
//   logistic,                   (y - target_mean) / target_sd randomized normal score of y under
//   poisson_regression                                        the watched estimator's plug-in
//                                                             predictive from before y
//                                                             (Innovation::prediction)
//   linear, gaussian,           (y - target_mean) / target_sd watched ls: the recursive residual,
//   lognormal                                                 standardized by its own running
//                                                             scale (RecursiveResidualStandardizer,
//                                                             exact); watched ml, gaussian /
//                                                             lognormal: y (log y) through the
//                                                             self-starting standardizer (Hawkins,
//                                                             exact); else the estimator's own
//                                                             standardized innovation (map: normal
//                                                             score of the exact posterior
//                                                             predictive; ml linear: plug-in)
// The randomization of the count scores is keyed by the channel name (score_seed: the same for
// every detector of a channel, so they all read the same z) and packed with the detector.
//   recursive_cusum, recursive_cusum_sq: the raw recursive residual of the watched ls.
//   band: the watched estimator's parameter report (built per observation: this detector
//         allocates).
// A z that is not available yet (NaN) is skipped by every detector.
#pragma once

#include <cstdint>
#include <memory>
#include <span>
#include <variant>
#include <vector>

#include "daemon/pipeline/boxed.h"
#include "daemon/pipeline/detector_setup.h"
#include "daemon/pipeline/estimator_slot.h"
#include "estimators/core/report.h"
#include "estimators/core/sample.h"
#include "estimators/detect/alarm.h"
#include "estimators/detect/exact_scores.h"
#include "estimators/detect/self_starting.h"

namespace bayline::pipeline {

// Everything a detector may read about one accepted observation.
struct DetectorInput {
  const est::Sample* sample = nullptr;
  const est::Innovation* innovation = nullptr;  // of the watched estimator
  const est::RecursiveResidual* rr = nullptr;   // of the watched estimator (ls only)
  const EstimatorSlot* watched = nullptr;       // after the update
  double level = 0.95;
  est::ObservationMark mark;
};

// The last alarm raised, as the control API reports it.
struct LastAlarm {
  uint64_t seq = 0;
  int64_t time_ns = 0;
  uint64_t onset_seq = 0;
  int64_t onset_time_ns = 0;
  double statistic = 0, threshold = 0, shift = 0, trigger_y = 0;
  uint8_t direction = 0;  // est::Direction
};

class DetectorSlot {
 public:
  // score_seed keys the randomization of the exact scores (pipeline: ChannelHash of the name).
  DetectorSlot(const DetectorSetup& setup, Model model, EstimatorKind watched_kind,
               uint64_t score_seed);

  // Whether this detector reads the watched estimator's innovation (DetectorInput::innovation must
  // then be given).
  static bool ReadsInnovation(const DetectorSetup& setup, Model model, EstimatorKind watched_kind);
  // The score family of a model, false for linear / gaussian / lognormal (no exact score).
  static bool ExactScoreFamily(Model model, est::ScoreFamily* family);

  // Feeds one accepted observation. On ok, *event holds the detector's event (raised / cleared).
  // Fails only on a numerical failure inside the detector; then nothing changed.
  est::Status Update(const DetectorSetup& setup, const DetectorInput& in,
                     est::DetectorEvent* event);

  bool alarm_active() const;
  double last_statistic() const { return last_statistic_; }
  double last_threshold() const { return last_threshold_; }
  uint64_t alarms_raised() const { return alarms_raised_; }
  // The last alarm raised; all zero before the first.
  const LastAlarm& last_alarm() const;
  void RecordAlarm(const LastAlarm& alarm);

  // The fleet budget's state of this detector (fleet_budget.h); nullptr when not budgeted.
  const FleetChannelState* fleet() const { return fleet_.get(); }

  // Layout: [3 bookkeeping + 8 last-alarm values][n_std, standardizer state]
  // ([n_fleet, fleet budget state] when budgeted)[detector state].
  void Pack(std::vector<double>* out) const;
  est::Status Unpack(std::span<const double> values);  // kInvalidState, nothing changed, on error

 private:
  enum class Source : uint8_t {
    kPhase2,
    kLsResidual,
    kSelfStarting,
    kSelfStartingLog,
    kInnovation,
    kExactScore
  };
  using Impl =
      std::variant<est::Cusum, est::Ewma, est::PageHinkley, Boxed<est::Glr>, Boxed<est::Bocpd>,
                   est::RecursiveCusum, Boxed<est::RecursiveCusumSquares>, est::ToleranceBand>;
  using Standardizer =
      std::variant<std::monostate, est::SelfStartingStandardizer,
                   est::RecursiveResidualStandardizer, est::ExactScoreStandardizer>;

  static Impl MakeImpl(const DetectorSetup& setup);
  static Source SourceFor(const DetectorSetup& setup, Model model, EstimatorKind watched_kind);
  static bool ReadsZ(const DetectorSetup& setup);
  // Budgeted cusum / ewma: `impl` with its threshold (h or L) replaced, state kept.
  static void SetThreshold(double head_start_fraction, double threshold, Impl* impl);
  double StandardizedValue(const DetectorSetup& setup, const DetectorInput& in);

  Impl impl_;
  Standardizer standardizer_;
  Source source_;
  double last_statistic_ = est::kNaN;
  double last_threshold_ = est::kNaN;
  uint64_t alarms_raised_ = 0;
  // Allocated at the first alarm only: most channels never alarm, so they do not carry it.
  std::unique_ptr<LastAlarm> last_alarm_;
  // Budgeted detectors only (fleet_budget.h): rate, ARL0 and threshold in force, membership of N.
  std::unique_ptr<FleetChannelState> fleet_;
};

}  // namespace bayline::pipeline
