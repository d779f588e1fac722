#include "daemon/pipeline/detector_setup.h"

#include <algorithm>
#include <array>
#include <cmath>
#include <utility>

#include "daemon/pipeline/bocpd_calibration_cache.h"
#include "estimators/detect/calibration.h"

namespace bayline::pipeline {
namespace {

constexpr std::array<std::pair<std::string_view, DetectorKind>, 8> kKinds{{
    {"cusum", DetectorKind::kCusum},
    {"ewma", DetectorKind::kEwma},
    {"page_hinkley", DetectorKind::kPageHinkley},
    {"glr", DetectorKind::kGlr},
    {"bocpd", DetectorKind::kBocpd},
    {"recursive_cusum", DetectorKind::kRecursiveCusum},
    {"recursive_cusum_sq", DetectorKind::kRecursiveCusumSquares},
    {"band", DetectorKind::kBand},
}};

est::Status Prefixed(const std::string& path, const est::Status& s) {
  if (s.ok()) return s;
  return est::Status::Error(s.code(), path + ": " + s.message());
}

}  // namespace

bool ParseDetectorKind(std::string_view name, DetectorKind* kind) {
  for (const auto& [n, k] : kKinds) {
    if (n == name) {
      *kind = k;
      return true;
    }
  }
  return false;
}

std::string_view DetectorKindName(DetectorKind kind) {
  for (const auto& [n, k] : kKinds) {
    if (k == kind) return n;
  }
  return "unknown";
}

bool ParseDirection(std::string_view name, est::Direction* direction) {
  if (name.empty() || name == "both") {
    *direction = est::Direction::kBoth;
  } else if (name == "up") {
    *direction = est::Direction::kUp;
  } else if (name == "down") {
    *direction = est::Direction::kDown;
  } else {
    return false;
  }
  return true;
}

std::string_view DirectionName(est::Direction direction) {
  switch (direction) {
    case est::Direction::kUp:
      return "up";
    case est::Direction::kDown:
      return "down";
    case est::Direction::kBoth:
      return "both";
    case est::Direction::kNone:
      return "";
  }
  return "";
}

int BocpdSimulationRuns(double arl0) {
  const double runs = std::round(kBocpdSimulatedObservations / arl0);
  return static_cast<int>(std::clamp(runs, static_cast<double>(kBocpdMinSimulationRuns),
                                     static_cast<double>(kSimulationRuns)));
}

est::Status CalibrateDetector(const bayline::v1::DetectorSpec& spec, const std::string& path,
                              DetectorSetup* out) {
  DetectorSetup d;
  if (!ParseDetectorKind(spec.kind(), &d.kind)) {
    return est::Status::Error(est::ErrorCode::kInvalidConfig,
                              path + ".kind: unknown detector \"" + spec.kind() + "\"");
  }
  if (!ParseDirection(spec.direction(), &d.direction)) {
    return est::Status::Error(est::ErrorCode::kInvalidConfig,
                              path + ".direction: must be both, up or down");
  }
  d.watch_name = spec.watch();
  d.phase2 = spec.mode() == "phase2";
  d.target_mean = spec.target_mean();
  d.target_sd = spec.target_sd() > 0 ? spec.target_sd() : 1.0;
  d.inflate_on_alarm = spec.inflate_on_alarm();
  d.band_parameter = spec.parameter();
  const int64_t holdoff = spec.holdoff();
  est::AlarmTarget target;
  target.arl0 = spec.arl0() > 0 ? spec.arl0() : est::kDefaultArl0;
  const bool budgeted = spec.false_alarms_per_day() > 0;  // fleet_budget.h
  if (budgeted) {
    if (est::Status v = ValidateFleetBudget(spec, path); !v.ok()) return v;
    target.arl0 = d.kind == DetectorKind::kEwma ? kFleetDesignArl0 : kFleetMaxArl0;
  }
  target.shift = spec.shift() > 0 ? spec.shift() : 1.0;
  const est::SimulationBudget budget{.runs = kSimulationRuns};

  est::Status s;
  switch (d.kind) {
    case DetectorKind::kCusum: {
      auto& o = d.cusum;
      o.direction = d.direction;
      o.holdoff = holdoff;
      const double fraction = spec.head_start();
      if (spec.h() > 0) {
        o.k = spec.k() > 0 ? spec.k() : target.shift / 2;
        o.h = spec.h();
        o.head_start = fraction * o.h;
        s = o.Validate();
      } else if (spec.k() > 0) {
        o.k = spec.k();
        s = est::CalibrateCusumInterval(target.arl0, &o, fraction);
      } else {
        s = est::CalibrateCusum(target, &o, fraction);
      }
      break;
    }
    case DetectorKind::kEwma: {
      auto& o = d.ewma;
      o.direction = d.direction;
      o.holdoff = holdoff;
      if (spec.lambda() > 0 && spec.limit() > 0) {
        o.lambda = spec.lambda();
        o.L = spec.limit();
        s = o.Validate();
      } else if (spec.lambda() > 0) {
        o.lambda = spec.lambda();
        s = est::CalibrateEwmaWidth(target.arl0, &o);
      } else {
        s = est::CalibrateEwma(target, &o);
      }
      break;
    }
    case DetectorKind::kPageHinkley: {
      auto& o = d.page_hinkley;
      o.direction = d.direction;
      o.holdoff = holdoff;
      if (spec.delta() > 0) target.shift = 2 * spec.delta();
      if (spec.threshold() > 0) {
        o.delta = target.shift / 2;
        o.threshold = spec.threshold();
        s = o.Validate();
      } else {
        s = est::CalibratePageHinkley(target, &o, budget);
      }
      break;
    }
    case DetectorKind::kGlr: {
      auto& o = d.glr;
      o.direction = d.direction;
      o.holdoff = holdoff;
      o.window = spec.window();
      if (spec.threshold() > 0) {
        if (o.window == 0) o.window = 50;
        o.threshold = spec.threshold();
        s = o.Validate();
      } else {
        s = est::CalibrateGlr(target, &o, budget);
      }
      break;
    }
    case DetectorKind::kBocpd: {
      auto& o = d.bocpd;
      o.holdoff = static_cast<int>(holdoff);
      o.hazard = spec.hazard() > 0 ? spec.hazard() : 1.0 / target.arl0;
      if (spec.threshold() > 0) {  // raw: recent keeps its old default, 10
        if (spec.recent() > 0) o.window = static_cast<int>(spec.recent());
        o.threshold = spec.threshold();
        s = o.Validate();
      } else {
        o.window =
            spec.recent() > 0 ? static_cast<int>(spec.recent()) : est::BocpdWindowForShift(target);
        s = o.Validate();
        if (s.ok()) {
          const est::SimulationBudget bocpd_budget{.runs = BocpdSimulationRuns(target.arl0)};
          s = CachedCalibrateBocpdThreshold(target.arl0, &o, bocpd_budget);
        }
      }
      break;
    }
    case DetectorKind::kRecursiveCusum: {
      auto& o = d.recursive_cusum;
      if (spec.significance() > 0) o.alpha = spec.significance();
      if (spec.window() > 0) o.horizon = static_cast<int>(spec.window());
      o.holdoff = static_cast<int>(holdoff);
      s = o.Validate();
      break;
    }
    case DetectorKind::kRecursiveCusumSquares: {
      auto& o = d.recursive_cusum_squares;
      if (spec.significance() > 0) o.alpha = spec.significance();
      if (spec.window() > 0) o.horizon = static_cast<int>(spec.window());
      o.holdoff = static_cast<int>(holdoff);
      s = o.Validate();
      break;
    }
    case DetectorKind::kBand: {
      auto& o = d.band;
      o.lo = spec.band_low();
      o.hi = spec.band_high();
      o.holdoff = static_cast<int>(holdoff);
      s = o.Validate();
      break;
    }
  }
  if (s.ok() && budgeted) {  // cusum or ewma (ValidateFleetBudget)
    d.fleet = MakeFleetBudget(
        spec.false_alarms_per_day(),
        d.kind == DetectorKind::kCusum ? FleetChart::kCusum : FleetChart::kEwma, d.cusum, d.ewma);
  }
  if (!s.ok()) return Prefixed(path, s);
  *out = std::move(d);
  return est::Status::Ok();
}

}  // namespace bayline::pipeline
