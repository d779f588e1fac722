#include "estimators/detect/page_hinkley.h"

#include <algorithm>
#include <cassert>
#include <cmath>
#include <string>

namespace bayline::est {
namespace {

bool IsCount(double c) { return std::isfinite(c) && c >= 0.0 && c == std::floor(c); }

bool ValidPhState(const PageHinkley::State& s) {
  return IsCount(s.count) && std::isfinite(s.mean) && std::isfinite(s.upper) && s.upper >= 0.0 &&
         std::isfinite(s.lower) && s.lower >= 0.0 && IsCount(s.upper_count) &&
         IsCount(s.lower_count) && s.cycle.Valid();
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

Status PageHinkley::State::Unpack(StateReader& r) {
  double us = 0, ls = 0;
  r.Get(count) && r.Get(mean) && r.Get(upper) && r.Get(lower) && r.Get(upper_count) &&
      r.Get(lower_count) && r.Get(us) && r.Get(upper_onset_time) && r.Get(ls) &&
      r.Get(lower_onset_time) && cycle.Unpack(r);
  upper_onset_seq = static_cast<std::int64_t>(us);
  lower_onset_seq = static_cast<std::int64_t>(ls);
  if (Status s = r.status(false); !s.ok()) return s;
  if (!ValidPhState(*this))
    return Status::Error(ErrorCode::kInvalidState, "page_hinkley state holds invalid values");
  return Status::Ok();
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
  auto statistic = [&] {
    switch (options_.direction) {
      case Direction::kUp:
        return st.upper;
      case Direction::kDown:
        return st.lower;
      default:
        return std::max(st.upper, st.lower);
    }
  };
  if (!std::isfinite(z) || st.cycle.holdoff_left > 0.0) {
    if (std::isfinite(z)) st.cycle.holdoff_left -= 1.0;
    ev.statistic = statistic();
    return ev;
  }
  st.count += 1.0;
  st.mean += (z - st.mean) / st.count;
  const double d = z - st.mean;
  StepExcursion(d - options_.delta, mark, st.upper, st.upper_count, st.upper_onset_seq,
                st.upper_onset_time);
  StepExcursion(-d - options_.delta, mark, st.lower, st.lower_count, st.lower_onset_seq,
                st.lower_onset_time);
  ev.statistic = statistic();
  const bool up = WatchesSide(options_.direction, Direction::kUp) && st.upper > options_.threshold;
  const bool down =
      WatchesSide(options_.direction, Direction::kDown) && st.lower > options_.threshold;
  if (up || down) {
    const bool use_up = up && (!down || st.upper >= st.lower);
    ev.direction = use_up ? Direction::kUp : Direction::kDown;
    ev.onset_seq = use_up ? st.upper_onset_seq : st.lower_onset_seq;
    ev.onset_time = use_up ? st.upper_onset_time : st.lower_onset_time;
    ev.shift = use_up ? options_.delta + st.upper / std::max(1.0, st.upper_count)
                      : -(options_.delta + st.lower / std::max(1.0, st.lower_count));
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
