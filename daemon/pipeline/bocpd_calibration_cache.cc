#include "daemon/pipeline/bocpd_calibration_cache.h"

#include <array>
#include <map>
#include <mutex>

#include "estimators/detect/calibration.h"

namespace bayline::pipeline {
namespace {

using Key = std::array<double, 16>;

Key MakeKey(double arl0, const est::Bocpd::Options& o, const est::SimulationBudget& b) {
  return {arl0,
          static_cast<double>(o.model),
          o.prior_mean,
          o.prior_kappa,
          o.prior_shape,
          o.prior_rate,
          o.prior_alpha,
          o.prior_beta,
          o.hazard,
          o.prune_epsilon,
          static_cast<double>(o.max_run_lengths),
          static_cast<double>(o.window),
          static_cast<double>(b.runs),
          static_cast<double>(b.seed >> 32),
          static_cast<double>(b.seed & 0xffffffffu),
          b.max_length};
}

struct Memo {
  std::mutex mutex;
  std::map<Key, double> threshold;
};

Memo& TheMemo() {
  static Memo* const memo = new Memo();  // never destroyed: usable from any thread at exit
  return *memo;
}

}  // namespace

est::Status CachedCalibrateBocpdThreshold(double arl0, est::Bocpd::Options* options,
                                          const est::SimulationBudget& budget) {
  const Key key = MakeKey(arl0, *options, budget);
  Memo& memo = TheMemo();
  std::lock_guard lock(memo.mutex);
  if (auto it = memo.threshold.find(key); it != memo.threshold.end()) {
    options->threshold = it->second;
    return est::Status::Ok();
  }
  est::Bocpd::Options o = *options;
  if (est::Status s = est::CalibrateBocpdThreshold(arl0, &o, budget); !s.ok()) return s;
  if (memo.threshold.size() >= kMaxBocpdCalibrationEntries) memo.threshold.clear();
  memo.threshold.emplace(key, o.threshold);
  *options = o;
  return est::Status::Ok();
}

}  // namespace bayline::pipeline
