// DetectorSetup: one DetectorSpec of a rule turned into the options of one detector of
// estimators/detect, with thresholds calibrated from arl0 (+ shift) unless raw settings are given.
//
// Calibration (estimators/detect/calibration.h), done once per rule when a Pipeline is built or
// reconfigured, never per channel:
//   cusum        k = shift / 2, h for arl0 (Markov chain). Raw: h (with k, default shift / 2), or k
//                alone (h solved). head_start is a fraction of h.
//   ewma         lambda and L for arl0 and shift. Raw: lambda and limit, or lambda alone (L
//                solved).
//   page_hinkley delta = shift / 2 (or raw delta), threshold by simulation. Raw: threshold.
//   glr          window (raw or the library's rule), threshold by simulation. Raw: threshold.
//   bocpd        hazard = 1 / arl0 (or raw hazard), recent = raw or the library's rule from arl0
//                and shift (BocpdWindowForShift: clamp(round(8 ln(arl0) / shift^2), 10, 200)),
//                threshold on P(change within the last `recent` obs) by simulation on N(0,1)
//                input (normal-gamma segment model on the score), BocpdSimulationRuns(arl0) runs,
//                memoised per process (bocpd_calibration_cache.h). Raw: threshold (hazard default
//                1 / arl0, recent default 10), as before calibration existed.
//                Cost: about 2.5 * runs * arl0 bocpd updates of O(retained run lengths, 50-300)
//                each; measured CPU time (Release, shift 1, default options, a loaded 2-core
//                machine): arl0 200 (1000 runs) 6 s, 1000 (1000 runs) 40 s, 10000 (200 runs) 40 s.
//                It blocks the build of the rule set that first needs it.
//   Simulated calibration (page_hinkley, glr, bocpd) is limited to arl0 <= kMaxSimulatedArl0 (its
//   cost grows with arl0); above it a raw threshold is required (ValidateConfig says so).
//   recursive_cusum, recursive_cusum_sq: significance (default 0.05), block length `window`
//                (default 100).
//   band         band_low, band_high on parameter `parameter` (bound per channel model).
// With false_alarms_per_day (cusum, ewma; fleet_budget.h) the rule's calibration is at
// kFleetMaxArl0 for cusum (k, head start) and kFleetDesignArl0 for ewma (lambda), and `fleet`
// holds the budget; RuleSet::Build completes it (BindFleetBudget: N and the threshold table).
#pragma once

#include <cstdint>
#include <string>
#include <string_view>

#include "bayline/v1/config.pb.h"
#include "daemon/pipeline/fleet_budget.h"
#include "estimators/core/status.h"
#include "estimators/detect/alarm.h"
#include "estimators/detect/band.h"
#include "estimators/detect/bocpd.h"
#include "estimators/detect/cusum.h"
#include "estimators/detect/ewma.h"
#include "estimators/detect/glr.h"
#include "estimators/detect/page_hinkley.h"
#include "estimators/detect/recursive_residual_tests.h"

namespace bayline::pipeline {

enum class DetectorKind : uint8_t {
  kCusum,
  kEwma,
  kPageHinkley,
  kGlr,
  kBocpd,
  kRecursiveCusum,
  kRecursiveCusumSquares,
  kBand
};

inline constexpr double kMaxSimulatedArl0 = 1e4;
inline constexpr int kSimulationRuns = 1000;
// A bocpd update costs about 100 times a chart's, so its simulation is bounded in observations:
// runs = clamp(kBocpdSimulatedObservations / arl0, kBocpdMinSimulationRuns, kSimulationRuns);
// the achieved in-control ARL is within about 1 / sqrt(runs) of arl0 (3 % at arl0 <= 1000, 7 %
// at arl0 >= 5000).
inline constexpr double kBocpdSimulatedObservations = 1e6;
inline constexpr int kBocpdMinSimulationRuns = 200;
// The bocpd runs above for an arl0.
int BocpdSimulationRuns(double arl0);

// "cusum" -> kCusum etc.; false for an unknown name.
bool ParseDetectorKind(std::string_view name, DetectorKind* kind);
std::string_view DetectorKindName(DetectorKind kind);
// "both" (also ""), "up", "down"; false otherwise.
bool ParseDirection(std::string_view name, est::Direction* direction);
std::string_view DirectionName(est::Direction direction);

struct DetectorSetup {
  DetectorKind kind = DetectorKind::kCusum;
  std::string watch_name;  // as configured ("" = the first estimator)
  int watch = 0;           // index into the channel's estimators (bound per channel spec)
  bool phase2 = false;     // standardize by target_mean / target_sd instead of self-starting
  double target_mean = 0.0;
  double target_sd = 1.0;
  double inflate_on_alarm = 0.0;
  est::Direction direction = est::Direction::kBoth;
  std::string band_parameter;  // band: parameter name (bound to band.parameter per channel)

  est::CusumOptions cusum;
  est::EwmaOptions ewma;
  est::PageHinkleyOptions page_hinkley;
  est::GlrOptions glr;
  est::Bocpd::Options bocpd;
  est::RecursiveCusum::Options recursive_cusum;
  est::RecursiveCusumSquares::Options recursive_cusum_squares;
  est::ToleranceBand::Options band;

  // Fleet budget (fleet_budget.h): set for a cusum / ewma with false_alarms_per_day; its options
  // above then hold the rule's calibration, and each channel its own threshold.
  std::shared_ptr<const FleetBudgetSetup> fleet;
};

// Builds and calibrates. `path` prefixes error messages ("rules[0].spec.detectors[1]").
est::Status CalibrateDetector(const bayline::v1::DetectorSpec& spec, const std::string& path,
                              DetectorSetup* out);

}  // namespace bayline::pipeline
