// A process-wide memo of bocpd threshold calibrations (est::CalibrateBocpdThreshold), which cost
// seconds of simulation (calibration.h): every RuleSet built in the process (each worker, each
// reload, `bayline replay`) calibrates the same rule once, not once per build.
//
// Key: arl0 and every option the simulated statistic depends on (model, priors, hazard, pruning,
// cap, window) plus the simulation budget (runs, seed, max_length); the value is the solved
// threshold. Only successes are stored. At most kMaxEntries entries: when full it is emptied (a
// process sees few distinct rules; reloads with ever-new arl0 values must not grow it without
// bound). Thread safe: one mutex, held during a calibration, so concurrent builds of the same rule
// wait for one simulation instead of running it twice.
#pragma once

#include <cstddef>

#include "estimators/core/status.h"
#include "estimators/detect/arl.h"
#include "estimators/detect/bocpd.h"

namespace bayline::pipeline {

inline constexpr std::size_t kMaxBocpdCalibrationEntries = 256;

// As est::CalibrateBocpdThreshold(arl0, options, budget), from the memo when the key was solved
// before in this process.
est::Status CachedCalibrateBocpdThreshold(double arl0, est::Bocpd::Options* options,
                                          const est::SimulationBudget& budget);

}  // namespace bayline::pipeline
