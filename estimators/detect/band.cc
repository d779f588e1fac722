#include "estimators/detect/band.h"

#include <algorithm>
#include <cassert>
#include <cmath>
#include <string>

namespace bayline::est {

namespace {
Status Bad(const std::string& what) { return Status::Error(ErrorCode::kInvalidConfig, what); }
}  // namespace

Status ToleranceBand::Options::Validate() const {
  if (parameter < 0) return Bad("band parameter index must be >= 0");
  if (!std::isfinite(lo) || !std::isfinite(hi) || !(lo < hi))
    return Bad("band needs finite lo < hi");
  if (!(hysteresis >= 0) || !(2 * hysteresis <= hi - lo))
    return Bad("band hysteresis must be in [0, (hi - lo) / 2]");
  if (holdoff < 0) return Bad("band holdoff must be >= 0");
  return Status::Ok();
}

void ToleranceBand::State::Pack(StateWriter& w) const {
  w.Put(alarm_active);
  w.Put(holdoff_left);
  w.Put(value_outside);
  w.Put(outside_seq);
  w.Put(outside_time);
}

Status ToleranceBand::State::Unpack(StateReader& r) {
  State s;
  r.Get(s.alarm_active);
  r.Get(s.holdoff_left);
  r.Get(s.value_outside);
  r.Get(s.outside_seq);
  r.Get(s.outside_time);
  if (Status st = r.status(); !st.ok()) return st;
  *this = s;
  return Status::Ok();
}

ToleranceBand::ToleranceBand(const Options& options) : options_(options) {
  assert(options_.Validate().ok());
}

Status ToleranceBand::Update(const ParameterReport& report, const ObservationMark& mark,
                             DetectorEvent* event) {
  const auto i = static_cast<std::size_t>(options_.parameter);
  if (i >= report.value.size() || i >= report.lower.size() || i >= report.upper.size()) {
    return Status::Error(ErrorCode::kOutOfDomain,
                         "band parameter " + std::to_string(i) + " is not in a report of " +
                             std::to_string(report.value.size()) + " parameters");
  }
  DetectorEvent ev;
  ev.threshold = 0;
  ev.direction = Direction::kBoth;
  const double v = report.value[i], lower = report.lower[i], upper = report.upper[i];
  // No interval yet (not identifiable, or no degrees of freedom for a standard error).
  if (!report.identifiable || std::isnan(lower) || std::isnan(upper)) {
    if (state_.holdoff_left > 0) state_.holdoff_left -= 1;
    if (event) *event = ev;
    return Status::Ok();
  }
  if (!std::isfinite(v)) {
    return Status::Error(ErrorCode::kNonFinite, "band parameter " + std::to_string(i) +
                                                    " estimate is " + std::to_string(v));
  }
  if (lower > upper)
    return Status::Error(ErrorCode::kOutOfDomain, "band interval has lower > upper");

  const double lo = options_.lo, hi = options_.hi, h = options_.hysteresis;
  State& s = state_;
  const bool outside_now = v < lo || v > hi;
  if (outside_now && !s.value_outside) {
    s.outside_seq = static_cast<double>(mark.seq);
    s.outside_time = mark.time;
  }
  s.value_outside = outside_now;

  const double gap = std::max(lo - upper, lower - hi);
  ev.statistic = gap;
  if (s.holdoff_left > 0) {
    s.holdoff_left -= 1;
  } else if (s.alarm_active) {
    if (std::max(lo + h - upper, lower - (hi - h)) <= 0) {
      ev.cleared = true;
      s.alarm_active = false;
    }
  } else if (gap > 0) {
    ev.raised = true;
    const bool up = lower > hi;
    ev.direction = up ? Direction::kUp : Direction::kDown;
    ev.shift = up ? v - hi : v - lo;
    if (outside_now) {
      ev.onset_seq = static_cast<std::int64_t>(s.outside_seq);
      ev.onset_time = s.outside_time;
    } else {  // cannot happen for a report whose value lies in its interval; be safe
      ev.onset_seq = mark.seq;
      ev.onset_time = mark.time;
    }
    s.alarm_active = true;
    s.holdoff_left = options_.holdoff;
  }
  if (event) *event = ev;
  return Status::Ok();
}

Status ToleranceBand::Restore(const State& s) {
  if (!(s.holdoff_left >= 0) || s.holdoff_left > options_.holdoff ||
      s.holdoff_left != std::floor(s.holdoff_left))
    return Status::Error(ErrorCode::kInvalidState, "band holdoff_left out of range");
  if (!std::isfinite(s.outside_seq) || std::isinf(s.outside_time))
    return Status::Error(ErrorCode::kInvalidState, "band onset mark invalid");
  state_ = s;
  return Status::Ok();
}

}  // namespace bayline::est
