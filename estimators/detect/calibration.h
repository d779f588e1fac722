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

namespace bayline::est {

struct AlarmTarget {
  double arl0 = 500.0;  // in-control ARL: mean observations between false alarms, in [2, 1e7]
  double shift = 1.0;   // design shift D in sd units, finite and > 0
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

// ARL of a configured chart at each shift (sd units), in order.
std::vector<double> CusumArlProfile(const CusumOptions& o, std::span<const double> shifts,
                                    const ArlAccuracy& acc = {});
std::vector<double> EwmaArlProfile(const EwmaOptions& o, std::span<const double> shifts,
                                   const ArlAccuracy& acc = {});

}  // namespace bayline::est
