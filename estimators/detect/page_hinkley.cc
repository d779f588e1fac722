#include "estimators/detect/page_hinkley.h"

#include <algorithm>
#include <cassert>
#include <cmath>
#include <string>

namespace bayline::est {
namespace {

bool IsCount(double c) { return std::isfinite(c) && c >= 0.0 && c == std::floor(c); }

bool ValidPhState(const PageHinkley::State& s) {
  return IsCount(s.count) && std::isfinite(s.mean) && s.SidesValid();
}

}  // namespace

Status PageHinkleyOptions::Validate() const {
  if (!(std::isfinite(delta) && delta >= 0.0))
    return Status::Error(
        ErrorCode::kInvalidConfig,
        "page_hinkley delta must be finite and >= 0, got " + std::to_string(delta));
  if (!(std::isfinite(threshold) && threshold > 0.0))
    return Status::Error(
        ErrorCode::kInvalidConfig,
        "page_hinkley threshold must be finite and > 0, got " + std::to_string(threshold));
  if (Status s = ValidateChartDirection(direction); !s.ok()) return s;
  return ValidateHoldoff(holdoff);
}

void PageHinkley::State::Pack(StateWriter& w) const {
  w.Put(count);
  w.Put(mean);
  PackSides(w);
}

Status PageHinkley::State::Unpack(StateReader& r) {
  r.Get(count) && r.Get(mean) && UnpackSides(r);
  if (Status s = r.status(false); !s.ok()) return s;
  return Validate(*this);
}

PageHinkley::PageHinkley(const PageHinkleyOptions& options) : options_(options) {
  assert(options_.Validate().ok());
}

void PageHinkley::Reset() { state_ = State(); }

void PageHinkley::Restart() {
  const AlarmCycle cycle = state_.cycle;
  state_ = State();
  state_.cycle = cycle;
}

DetectorEvent PageHinkley::Update(double z, const ObservationMark& mark) {
  const State before = state_;
  const DetectorEvent ev = Step(z, mark);
  if (Validate(state_).ok()) return ev;
  state_ = before;
  return Step(kNaN, mark);  // ignored, as a non-finite z
}

DetectorEvent PageHinkley::Step(double z, const ObservationMark& mark) {
  DetectorEvent ev;
  ev.threshold = options_.threshold;
  ev.direction = options_.direction;
  State& st = state_;
  if (st.SkipObservation(z, options_.direction, &ev)) return ev;
  st.count += 1.0;
  st.mean += (z - st.mean) / st.count;
  const double d = z - st.mean;
  st.Step(d - options_.delta, -d - options_.delta, mark);
  if (st.Judge(options_.direction, options_.threshold, options_.delta, options_.holdoff, &ev)) {
    Restart();
  }
  return ev;
}

Status PageHinkley::Validate(const State& s) {
  if (!ValidPhState(s))
    return Status::Error(ErrorCode::kInvalidState, "page_hinkley state holds invalid values");
  return Status::Ok();
}

Status PageHinkley::Restore(const State& s) {
  if (Status v = Validate(s); !v.ok()) return v;
  state_ = s;
  return Status::Ok();
}

}  // namespace bayline::est
