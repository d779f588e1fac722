#include "daemon/pipeline/fleet_budget.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <functional>
#include <sstream>

#include "estimators/detect/calibration.h"

namespace bayline::pipeline {
namespace {

using est::ErrorCode;
using est::Status;

std::string Num(double v) {
  std::ostringstream o;
  o << v;
  return o.str();
}

Status Bad(const std::string& path, const std::string& what) {
  return Status::Error(ErrorCode::kInvalidConfig, path + ": " + what);
}

}  // namespace

Status ThresholdTable::Build(double lo, double hi, const std::function<double(double)>& log_arl,
                             std::shared_ptr<const ThresholdTable>* out) {
  auto t = std::make_shared<ThresholdTable>();
  t->thresholds_.resize(kPoints);
  t->log_arl_.resize(kPoints);
  const double margin = kMargin * (hi - lo);  // so the ends are inside the table
  lo -= margin;
  hi += margin;
  for (int j = 0; j < kPoints; ++j) {
    const double h = lo + (hi - lo) * j / (kPoints - 1);
    const double y = log_arl(h);
    if (!std::isfinite(y) || (j > 0 && !(y > t->log_arl_[j - 1]))) {
      return Status::Error(ErrorCode::kNumericalFailure,
                           "fleet budget: the in-control ARL is not increasing in the threshold "
                           "at " +
                               Num(h));
    }
    t->thresholds_[j] = h;
    t->log_arl_[j] = y;
  }
  *out = std::move(t);
  return Status::Ok();
}

Status ThresholdTable::ForCusum(const est::CusumOptions& o, double head_start_fraction,
                                std::shared_ptr<const ThresholdTable>* out) {
  est::CusumOptions lo = o, hi = o;
  if (Status s = est::CalibrateCusumInterval(kFleetMinArl0, &lo, head_start_fraction); !s.ok())
    return s;
  if (Status s = est::CalibrateCusumInterval(kFleetMaxArl0, &hi, head_start_fraction); !s.ok())
    return s;
  return Build(
      lo.h, hi.h,
      [&](double h) {
        est::CusumOptions c = o;
        c.h = h;
        c.head_start = head_start_fraction * h;
        return std::log(est::CusumArl(c, 0.0));
      },
      out);
}

Status ThresholdTable::ForEwma(const est::EwmaOptions& o,
                               std::shared_ptr<const ThresholdTable>* out) {
  est::EwmaOptions lo = o, hi = o;
  if (Status s = est::CalibrateEwmaWidth(kFleetMinArl0, &lo); !s.ok()) return s;
  if (Status s = est::CalibrateEwmaWidth(kFleetMaxArl0, &hi); !s.ok()) return s;
  return Build(
      lo.L, hi.L,
      [&](double L) {
        est::EwmaOptions e = o;
        e.L = L;
        return std::log(est::EwmaArl(e, 0.0));
      },
      out);
}

double ThresholdTable::Threshold(double arl0) const {
  const double y = std::log(arl0);
  const auto it = std::upper_bound(log_arl_.begin(), log_arl_.end(), y);
  std::size_t j = static_cast<std::size_t>(it - log_arl_.begin());
  j = std::clamp<std::size_t>(j, 1, log_arl_.size() - 1) - 1;  // segment [j, j + 1]
  const double t = std::clamp((y - log_arl_[j]) / (log_arl_[j + 1] - log_arl_[j]), 0.0, 1.0);
  return thresholds_[j] + t * (thresholds_[j + 1] - thresholds_[j]);
}

std::atomic<int64_t>* FleetPools::Members(const std::string& key) {
  std::lock_guard<std::mutex> lock(mutex_);
  auto it = index_.find(key);
  if (it != index_.end()) return it->second;
  std::atomic<int64_t>* counter = &counters_.emplace_back(0);
  index_.emplace(key, counter);
  return counter;
}

FleetChannelState::FleetChannelState(const FleetBudgetSetup& setup)
    : head_start_fraction_(setup.head_start_fraction), membership_(setup.members) {
  v_.threshold = setup.table->Threshold(kFleetMaxArl0);
}

bool FleetChannelState::Observe(const FleetBudgetSetup& setup, double time_s) {
  if (setup.members != membership_.members()) membership_.Join(setup.members);
  v_.rate.Observe(time_s);
  double target = kFleetMaxArl0;
  if (v_.rate.known()) {
    const auto n = std::max<int64_t>(1, setup.members->load(std::memory_order_relaxed));
    target =
        std::clamp(FleetArl0(static_cast<double>(n), v_.rate.per_day(), setup.false_alarms_per_day),
                   kFleetMinArl0, kFleetMaxArl0);
  }
  if (target <= v_.arl0 * (1 + kFleetHysteresis) && target * (1 + kFleetHysteresis) >= v_.arl0)
    return false;
  v_.arl0 = target;
  const double threshold = setup.table->Threshold(target);
  const bool changed = threshold != v_.threshold;
  v_.threshold = threshold;
  return changed;
}

void FleetChannelState::Values::Pack(est::StateWriter& w) const {
  rate.Pack(w);
  w.Put(arl0);
  w.Put(threshold);
}

Status FleetChannelState::Values::Unpack(est::StateReader& r) {
  ObservationRate new_rate;
  if (Status s = new_rate.Unpack(r); !s.ok()) return s;
  double new_arl0 = 0, new_threshold = 0;
  if (!(r.Get(new_arl0) && r.Get(new_threshold))) return r.status();
  if (!(new_arl0 >= kFleetMinArl0 && new_arl0 <= kFleetMaxArl0 && std::isfinite(new_threshold) &&
        new_threshold > 0)) {
    return Status::Error(ErrorCode::kInvalidState, "fleet budget: ARL0 or threshold out of range");
  }
  rate = new_rate;
  arl0 = new_arl0;
  threshold = new_threshold;
  return Status::Ok();
}

bayline::v1::DetectorSpec WithFleetDefault(const bayline::v1::DaemonConfig& config,
                                           const bayline::v1::DetectorSpec& spec, bool* inherited) {
  *inherited = false;
  bayline::v1::DetectorSpec out = spec;
  const bool chart =
      (spec.kind() == "cusum" && spec.h() == 0) || (spec.kind() == "ewma" && spec.limit() == 0);
  if (config.false_alarms_per_day() > 0 && chart && spec.arl0() == 0 &&
      spec.false_alarms_per_day() == 0) {
    out.set_false_alarms_per_day(config.false_alarms_per_day());
    *inherited = true;
  }
  return out;
}

Status ValidateFleetBudget(const bayline::v1::DetectorSpec& spec, const std::string& path) {
  const double b = spec.false_alarms_per_day();
  if (b == 0) return Status::Ok();
  const std::string p = path + ".false_alarms_per_day";
  if (!(b > 0 && std::isfinite(b))) return Bad(p, "must be finite and > 0, got " + Num(b));
  if (spec.arl0() != 0) {
    return Bad(p,
               "arl0 and false_alarms_per_day exclude each other (the budget sets each "
               "channel's ARL0 from its rate)");
  }
  if (spec.kind() != "cusum" && spec.kind() != "ewma") {
    return Bad(p, "a fleet budget is supported by cusum and ewma only (" + spec.kind() +
                      " has no per-channel ARL0 calibration: set arl0 or threshold)");
  }
  if (spec.kind() == "cusum" && spec.h() != 0)
    return Bad(p, "the budget sets h per channel: remove h (k may stay)");
  if (spec.kind() == "ewma" && spec.limit() != 0)
    return Bad(p, "the budget sets limit per channel: remove limit (lambda may stay)");
  return Status::Ok();
}

std::shared_ptr<const FleetBudgetSetup> MakeFleetBudget(double false_alarms_per_day,
                                                        FleetChart chart,
                                                        const est::CusumOptions& cusum,
                                                        const est::EwmaOptions& ewma) {
  auto b = std::make_shared<FleetBudgetSetup>();
  b->false_alarms_per_day = false_alarms_per_day;
  b->chart = chart;
  b->cusum = cusum;
  b->ewma = ewma;
  if (chart == FleetChart::kCusum) b->head_start_fraction = cusum.head_start / cusum.h;
  return b;
}

Status BuildThresholdTable(const FleetBudgetSetup& setup,
                           std::shared_ptr<const ThresholdTable>* out) {
  return setup.chart == FleetChart::kCusum
             ? ThresholdTable::ForCusum(setup.cusum, setup.head_start_fraction, out)
             : ThresholdTable::ForEwma(setup.ewma, out);
}

Status FleetPools::Table(const FleetBudgetSetup& setup,
                         std::shared_ptr<const ThresholdTable>* out) {
  char key[160];
  if (setup.chart == FleetChart::kCusum) {
    std::snprintf(key, sizeof key, "cusum %a %a %d", setup.cusum.k, setup.head_start_fraction,
                  static_cast<int>(setup.cusum.direction));
  } else {
    std::snprintf(key, sizeof key, "ewma %a %d %d", setup.ewma.lambda,
                  static_cast<int>(setup.ewma.limits), static_cast<int>(setup.ewma.direction));
  }
  std::lock_guard<std::mutex> lock(mutex_);
  auto it = tables_.find(key);
  if (it != tables_.end()) {
    *out = it->second;
    return Status::Ok();
  }
  std::shared_ptr<const ThresholdTable> table;
  if (Status s = BuildThresholdTable(setup, &table); !s.ok()) return s;
  tables_.emplace(key, table);
  *out = std::move(table);
  return Status::Ok();
}

Status BindFleetBudget(const FleetBudgetSetup& setup, FleetPools* pools, const std::string& key,
                       std::shared_ptr<const FleetBudgetSetup>* out) {
  auto b = std::make_shared<FleetBudgetSetup>(setup);
  Status s;
  if (pools != nullptr) {
    b->own.reset();
    b->members = pools->Members(key);
    s = pools->Table(setup, &b->table);
  } else {
    b->own = std::make_shared<std::atomic<int64_t>>(0);
    b->members = b->own.get();
    s = BuildThresholdTable(setup, &b->table);
  }
  if (!s.ok()) return s;
  *out = std::move(b);
  return Status::Ok();
}

std::string FleetPoolKey(bool inherited, const std::string& rule_match, int detector_index) {
  if (inherited) return "daemon";
  return "rule " + rule_match + " detector " + std::to_string(detector_index);
}

}  // namespace bayline::pipeline
