#include "estimators/detect/cusum.h"

#include <algorithm>
#include <cassert>
#include <cmath>
#include <string>

namespace bayline::est {
Status CusumOptions::Validate() const {
  if (!(std::isfinite(k) && k >= 0.0))
    return Status::Error(ErrorCode::kInvalidConfig,
                         "cusum k must be finite and >= 0, got " + std::to_string(k));
  if (!(std::isfinite(h) && h > 0.0))
    return Status::Error(ErrorCode::kInvalidConfig,
                         "cusum h must be finite and > 0, got " + std::to_string(h));
  if (!(head_start >= 0.0 && head_start < h))
    return Status::Error(ErrorCode::kInvalidConfig,
                         "cusum head_start must be in [0, h), got " + std::to_string(head_start));
  if (Status s = ValidateChartDirection(direction); !s.ok()) return s;
  return ValidateHoldoff(holdoff);
}

void Cusum::State::Pack(StateWriter& w) const { PackSides(w); }

Status Cusum::State::Unpack(StateReader& r) {
  UnpackSides(r);
  if (Status s = r.status(false); !s.ok()) return s;
  return Validate(*this);
}

Cusum::Cusum(const CusumOptions& options) : options_(options) {
  assert(options_.Validate().ok());
  Reset();
}

void Cusum::Reset() {
  state_ = State();
  state_.upper = state_.lower = options_.head_start;
}

void Cusum::Restart() {
  state_.RestartSides(options_.restart_at_head_start ? options_.head_start : 0.0);
}

DetectorEvent Cusum::Update(double z, const ObservationMark& mark) {
  const State before = state_;
  const DetectorEvent ev = Step(z, mark);
  if (Validate(state_).ok()) return ev;
  state_ = before;
  return Step(kNaN, mark);  // ignored, as a non-finite z
}

DetectorEvent Cusum::Step(double z, const ObservationMark& mark) {
  DetectorEvent ev;
  ev.threshold = options_.h;
  ev.direction = options_.direction;
  if (state_.SkipObservation(z, options_.direction, &ev)) return ev;
  const double k = options_.k;
  state_.Step(z - k, -z - k, mark);
  if (state_.Judge(options_.direction, options_.h, k, options_.holdoff, &ev)) Restart();
  return ev;
}

Status Cusum::Validate(const State& s) {
  if (!s.SidesValid())
    return Status::Error(ErrorCode::kInvalidState, "cusum state holds invalid values");
  return Status::Ok();
}

Status Cusum::Restore(const State& s) {
  if (Status v = Validate(s); !v.ok()) return v;
  state_ = s;
  return Status::Ok();
}

}  // namespace bayline::est
