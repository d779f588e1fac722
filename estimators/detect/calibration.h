// Every search here takes a bounded number of steps (bracketing 60 + 60, regula falsi 100,
// golden section 100, simulated bracket growth 40 + 40, bisection 100 + 200; simulated runs end at
// kMaxSimulatedRunLength). Failure result: kNumericalFailure (options unchanged) when no bracket or
// no finite ARL is found within them; a root search that reaches its bound inside a bracket
// returns the bracket's middle.
//
// Threshold calibration: from the false-alarm rate a user can live with (an in-control ARL, ARL0:
// "one false alarm per 500 readings") and the shift they must catch (D, sd units) to each chart's
// raw options, plus the ARL the result achieves at other shifts.
//
//   CUSUM: k = D / 2 (the optimal reference value for a shift D), h solves ARL(h; shift 0) = ARL0
//          (arl.h, Markov chain). With a head start fraction f the head start is f h while solving.
//   EWMA:  for each lambda, L(lambda) solves ARL(lambda, L; 0) = ARL0; lambda is the value in
//          [0.02, 1] minimising ARL(lambda, L(lambda); D) (golden-section search on log lambda to
//          3%, then rounded to two significant digits), both ARLs taken with asymptotic limits.
//          (With exact limits the zero-state ARL at D keeps falling as lambda shrinks, because the
//          narrow early limits catch a shift present from the start; a shift that arrives later
//          meets the asymptotic limits, so they are the right yardstick for lambda.) L is then
//          solved for the chart's own `limits`.
//   Page-Hinkley: delta = D / 2; threshold by simulation (the record trick below).
//   GLR:   window: kept if > 0, else W = clamp(round(8 ln(ARL0) / D^2), 10, 1000) (a few times
//          the detection delay at D; our rule). Threshold by simulation.
//   BOCPD: hazard = 1 / ARL0; window kept if > 0, else clamp(round(8 ln(ARL0) / D^2), 10, 200);
//          threshold on its change statistic by simulation on N(0,1) input (details below).
// Simulation: `runs` seeded in-control paths are run until their statistic first exceeds an upper
// bracket h_hi; since a run's first-passage time over any h <= h_hi is read from the record values
// of its running maximum, ARL(h) is then known for every h below h_hi from one set of runs, and
// ARL(h) = ARL0 is solved on it. The result is reproducible for a given seed; the relative error
// of the achieved ARL0 is about 1/sqrt(runs). Cost: about 1.5 * runs * ARL0 chart updates (4000
// runs at ARL0 = 500: 3e6 updates, well under a second for Page-Hinkley and GLR with W = 50), so it
// grows with ARL0 (and W for GLR): cache the result per configuration (it depends only on ARL0, D,
// W, direction and the budget).
//
// Every function leaves the fields it does not calibrate (direction, holdoff, restart policy,
// limits) as the caller set them, returns kInvalidConfig naming the field when the target is out of
// range (ARL0 in [2, 1e7], D finite and > 0), and on any error leaves *options unchanged. Thread
// safe (no shared state).
#pragma once

#include <span>
#include <vector>

#include "estimators/core/status.h"
#include "estimators/detect/arl.h"
#include "estimators/detect/bocpd.h"

namespace bayline::est {

// The one default in-control ARL: a detector spec without arl0 (the daemon's default rule
// included), `bayline replay` and `bayline threshold` without --arl0, so a file alarms offline as
// it does live.
inline constexpr double kDefaultArl0 = 500.0;

struct AlarmTarget {
  double arl0 =
      kDefaultArl0;    // in-control ARL: mean observations between false alarms, in [2, 1e7]
  double shift = 1.0;  // design shift D in sd units, finite and > 0
  Status Validate() const;
};

// Sets k = D / 2 and h; head_start = head_start_fraction * h, fraction in [0, 1).
Status CalibrateCusum(const AlarmTarget& target, CusumOptions* options,
                      double head_start_fraction = 0.0, const ArlAccuracy& acc = {});
// Keeps k; solves h only (head_start = head_start_fraction * h as above).
Status CalibrateCusumInterval(double arl0, CusumOptions* options, double head_start_fraction = 0.0,
                              const ArlAccuracy& acc = {});

// Sets lambda (rule above) and L.
Status CalibrateEwma(const AlarmTarget& target, EwmaOptions* options, const ArlAccuracy& acc = {});
// Keeps lambda; solves L only.
Status CalibrateEwmaWidth(double arl0, EwmaOptions* options, const ArlAccuracy& acc = {});

// Sets delta = D / 2 and the threshold (simulation).
Status CalibratePageHinkley(const AlarmTarget& target, PageHinkleyOptions* options,
                            const SimulationBudget& budget = {});
// Sets the window when options->window is 0 (the rule above; Validate() rejects 0 elsewhere) and
// the threshold (simulation).
Status CalibrateGlr(const AlarmTarget& target, GlrOptions* options,
                    const SimulationBudget& budget = {});

// Sets hazard = 1 / ARL0, the window when options->window is 0 (BocpdWindowForShift; Validate()
// rejects 0 elsewhere) and the threshold on the alarm statistic (simulation on N(0,1) input), so
// that the in-control ARL of the configured detector (priors, pruning, cap kept) is ARL0. Needs
// the normal-gamma model (kInvalidConfig otherwise). holdoff is kept (it acts only after an alarm).
//
// Why the hazard is 1 / ARL0: it is the prior rate of changes; a user who accepts one false alarm
// per ARL0 observations expects real changes no more often than that, and the calibrated
// threshold, not the hazard, fixes the false-alarm rate. The hazard only shapes how fast evidence
// moves the posterior. Why the window grows with 1 / D^2: the statistic counts only changes within
// the last m observations, and a change that grows older than m before the statistic reaches the
// threshold is never alarmed on, so m must be a few times the observations a shift D needs to
// become evident (about 2 ln(ARL0) / D^2 for a CUSUM with k = D / 2, common practice, no source).
// m is the GLR window rule above, 8 ln(ARL0) / D^2 clamped to [10, 200] (our rule). Measured at
// ARL0 200, D = 1 (400 calibration runs, 300 measuring runs, delay after a step at observation
// 100): m = 10: delay 53.9 (many steps missed); 21: 16.4; 50: 10.5; 100: 10.8; the 3 sd delay
// stays 1.9-2.1.
// The statistic simulated is u = -ln(1 - statistic) (BocpdStatisticToLogScale), increasing in it,
// so "first u >= ln(1 / (1 - threshold))" is "first statistic >= threshold": the statistic path
// before the first alarm does not depend on the threshold, which the record trick needs (re-arming
// after an alarm does not matter: ARL counts to the first alarm).
// Cost: about 2.5 * runs * ARL0 Bocpd updates (pilot runs included), each O(retained run lengths)
// (<= max_run_lengths; about 50-300 in control with the default options), i.e. some 100 times a
// Page-Hinkley update; measured figures in daemon/pipeline/detector_setup.h. The result is
// reproducible for a given seed.
Status CalibrateBocpd(const AlarmTarget& target, Bocpd::Options* options,
                      const SimulationBudget& budget = {});
// Keeps hazard and window (>= 1); solves the threshold only.
Status CalibrateBocpdThreshold(double arl0, Bocpd::Options* options,
                               const SimulationBudget& budget = {});
// m = clamp(round(8 ln(ARL0) / D^2), 10, 200).
int BocpdWindowForShift(const AlarmTarget& target);
// u = -ln(1 - min(statistic, kBocpdMaxStatistic)): the scale the threshold is solved on.
inline constexpr double kBocpdMaxStatistic = 1.0 - 1e-15;
inline constexpr double kBocpdMaxLogStatistic = 34.5;  // about -ln(1e-15)
double BocpdStatisticToLogScale(double statistic);

// Mean detection delay of a configured normal-gamma Bocpd on N(0,1) input whose mean steps by
// `shift` after `change_at` observations: observations from the first shifted one to the alarm
// (1 = alarm on it), over `runs` runs without a false alarm before the change (runs with one are
// redrawn). shift = 0 gives the in-control ARL (change_at then does not matter). A shift present
// from the first observation (change_at = 0) is no change to BOCPD, only a first segment with
// that mean, so detection is measured after `change_at` > 0 in-control observations. NaN for
// invalid options or input, or when nearly every run alarms before the change. *standard_error
// (when not null) gets the standard error of the mean from the runs' sample sd.
double SimulateBocpdDelay(const Bocpd::Options& o, double shift, int change_at,
                          const SimulationBudget& b = {}, double* standard_error = nullptr);

// ARL of a configured chart at each shift (sd units), in order.
std::vector<double> CusumArlProfile(const CusumOptions& o, std::span<const double> shifts,
                                    const ArlAccuracy& acc = {});
std::vector<double> EwmaArlProfile(const EwmaOptions& o, std::span<const double> shifts,
                                   const ArlAccuracy& acc = {});

}  // namespace bayline::est
