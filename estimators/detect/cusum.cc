#include "estimators/detect/cusum.h"

#include <algorithm>
#include <cassert>
#include <cmath>
#include <string>

namespace bayline::est {
namespace {

bool ValidSide(double c, double count) {
  return std::isfinite(c) && c >= 0.0 && std::isfinite(count) && count >= 0.0 &&
         count == std::floor(count);
}

}  // namespace

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

void Cusum::State::Pack(StateWriter& w) const {
  w.Put(upper);
  w.Put(lower);
  w.Put(upper_count);
  w.Put(lower_count);
  w.Put(static_cast<double>(upper_onset_seq));
  w.Put(upper_onset_time);
  w.Put(static_cast<double>(lower_onset_seq));
  w.Put(lower_onset_time);
  cycle.Pack(w);
}

Status Cusum::State::Unpack(StateReader& r) {
  double us = 0, ls = 0;
  r.Get(upper) && r.Get(lower) && r.Get(upper_count) && r.Get(lower_count) && r.Get(us) &&
      r.Get(upper_onset_time) && r.Get(ls) && r.Get(lower_onset_time) && cycle.Unpack(r);
  upper_onset_seq = static_cast<std::int64_t>(us);
  lower_onset_seq = static_cast<std::int64_t>(ls);
  if (Status s = r.status(false); !s.ok()) return s;
  if (!ValidSide(upper, upper_count) || !ValidSide(lower, lower_count) || !cycle.Valid())
    return Status::Error(ErrorCode::kInvalidState, "cusum state holds invalid values");
  return Status::Ok();
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
  const double s = options_.restart_at_head_start ? options_.head_start : 0.0;
  state_.upper = state_.lower = s;
  state_.upper_count = state_.lower_count = 0.0;
}

double Cusum::Statistic() const {
  switch (options_.direction) {
    case Direction::kUp:
      return state_.upper;
    case Direction::kDown:
      return state_.lower;
    default:
      return std::max(state_.upper, state_.lower);
  }
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
  State& st = state_;
  if (!std::isfinite(z) || st.cycle.holdoff_left > 0.0) {
    if (std::isfinite(z)) st.cycle.holdoff_left -= 1.0;
    ev.statistic = Statistic();
    return ev;
  }
  const double k = options_.k;
  StepExcursion(z - k, mark, st.upper, st.upper_count, st.upper_onset_seq, st.upper_onset_time);
  StepExcursion(-z - k, mark, st.lower, st.lower_count, st.lower_onset_seq, st.lower_onset_time);
  const bool up = WatchesSide(options_.direction, Direction::kUp) && st.upper > options_.h;
  const bool down = WatchesSide(options_.direction, Direction::kDown) && st.lower > options_.h;
  ev.statistic = Statistic();
  if (up || down) {
    // When both cross on one observation (possible only for tiny h), report the larger side.
    const bool use_up = up && (!down || st.upper >= st.lower);
    ev.direction = use_up ? Direction::kUp : Direction::kDown;
    ev.onset_seq = use_up ? st.upper_onset_seq : st.lower_onset_seq;
    ev.onset_time = use_up ? st.upper_onset_time : st.lower_onset_time;
    ev.shift = use_up ? k + st.upper / std::max(1.0, st.upper_count)
                      : -(k + st.lower / std::max(1.0, st.lower_count));
    ev.raised = !st.cycle.active;
    st.cycle.active = true;
    st.cycle.holdoff_left = static_cast<double>(options_.holdoff);
    Restart();
  } else if (st.cycle.active) {
    ev.cleared = true;
    st.cycle.active = false;
  }
  return ev;
}

Status Cusum::Validate(const State& s) {
  if (!ValidSide(s.upper, s.upper_count) || !ValidSide(s.lower, s.lower_count) || !s.cycle.Valid())
    return Status::Error(ErrorCode::kInvalidState, "cusum state holds invalid values");
  return Status::Ok();
}

Status Cusum::Restore(const State& s) {
  if (Status v = Validate(s); !v.ok()) return v;
  state_ = s;
  return Status::Ok();
}

}  // namespace bayline::est
