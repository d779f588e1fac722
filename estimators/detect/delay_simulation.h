// Simulated detection delay of a chart, shared by every chart whose delay has no closed form
// (page_hinkley, bocpd).
//
// A run draws z_t ~ N(0, 1) for t <= change_at and N(shift, 1) after it and stops at the first
// alarm, or at change_at + cap observations (cap = budget.max_length, at most
// kMaxSimulatedRunLength; 1e7 by default). Its delay is t_alarm - change_at (cap when none came).
// A run whose alarm comes at or before the change is a false alarm and is drawn again; at most
// 1000 x runs attempts are made, after which the result is NaN.
// Returns the mean delay over budget.runs runs and, when `standard_error` is not null, its
// standard error (sample sd / sqrt(runs)).
//
// `restart()` puts the chart back to its initial state; `alarms(z)` absorbs one value and returns
// whether it raised an alarm, or std::nullopt when the chart failed (the result is then NaN).
// Deterministic for a given budget.seed.
#pragma once

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <limits>
#include <optional>
#include <random>

#include "estimators/detect/arl.h"

namespace bayline::est {

template <typename Restart, typename Alarms>
double SimulateMeanDelay(Restart restart, Alarms alarms, double shift, int change_at,
                         const SimulationBudget& b, double* standard_error) {
  constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
  if (!std::isfinite(shift) || b.runs < 1 || change_at < 0) return kNaN;
  const double cap = b.max_length > 0 ? std::min(b.max_length, kMaxSimulatedRunLength) : 1e7;
  std::mt19937_64 rng(b.seed);
  std::normal_distribution<double> normal(0.0, 1.0);
  double sum = 0.0, sum_sq = 0.0;
  int done = 0;
  const std::int64_t max_attempts = 1000 * static_cast<std::int64_t>(b.runs);
  for (std::int64_t attempt = 0; done < b.runs && attempt < max_attempts; ++attempt) {
    restart();
    double t = 0;
    bool early = false;
    while (t < change_at + cap) {
      t += 1.0;
      const std::optional<bool> raised = alarms(normal(rng) + (t > change_at ? shift : 0.0));
      if (!raised) return kNaN;
      if (*raised) {
        early = t <= change_at;
        break;
      }
    }
    if (early) continue;
    sum += t - change_at;
    sum_sq += (t - change_at) * (t - change_at);
    ++done;
  }
  if (done < b.runs) return kNaN;
  const double mean = sum / b.runs;
  if (standard_error) {
    const double var = b.runs > 1 ? std::max(0.0, (sum_sq - sum * mean) / (b.runs - 1)) : kNaN;
    *standard_error = std::sqrt(var / b.runs);
  }
  return mean;
}

}  // namespace bayline::est
