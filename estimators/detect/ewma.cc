#include "estimators/detect/ewma.h"

#include <cassert>
#include <cmath>
#include <string>

namespace bayline::est {

Status EwmaOptions::Validate() const {
  if (!(lambda > 0.0 && lambda <= 1.0))
    return Status::Error(ErrorCode::kInvalidConfig,
                         "ewma lambda must be in (0, 1], got " + std::to_string(lambda));
  if (!(std::isfinite(L) && L > 0.0))
    return Status::Error(ErrorCode::kInvalidConfig,
                         "ewma L must be finite and > 0, got " + std::to_string(L));
  if (limits != EwmaLimits::kExact && limits != EwmaLimits::kAsymptotic)
    return Status::Error(ErrorCode::kInvalidConfig, "ewma limits must be exact or asymptotic");
  if (Status s = ValidateChartDirection(direction); !s.ok()) return s;
  return ValidateHoldoff(holdoff);
}

void Ewma::State::Pack(StateWriter& w) const {
  w.Put(z);
  w.Put(count);
  w.Put(decay);
  w.Put(static_cast<double>(onset_seq));
  w.Put(onset_time);
  w.Put(run_sum);
  w.Put(run_count);
  cycle.Pack(w);
}

namespace {
bool ValidEwmaState(const Ewma::State& s) {
  return std::isfinite(s.z) && s.count >= 0.0 && std::isfinite(s.count) &&
         s.count == std::floor(s.count) && s.decay >= 0.0 && s.decay <= 1.0 &&
         std::isfinite(s.run_sum) && s.run_count >= 0.0 && std::isfinite(s.run_count) &&
         s.run_count == std::floor(s.run_count) && s.cycle.Valid();
}
}  // namespace

Status Ewma::State::Unpack(StateReader& r) {
  double seq = 0;
  r.Get(z) && r.Get(count) && r.Get(decay) && r.Get(seq) && r.Get(onset_time) && r.Get(run_sum) &&
      r.Get(run_count) && cycle.Unpack(r);
  onset_seq = static_cast<std::int64_t>(seq);
  if (Status s = r.status(false); !s.ok()) return s;
  if (!ValidEwmaState(*this))
    return Status::Error(ErrorCode::kInvalidState, "ewma state holds invalid values");
  return Status::Ok();
}

Ewma::Ewma(const EwmaOptions& options)
    : options_(options),
      asymptotic_var_(options.lambda / (2.0 - options.lambda)),
      decay_step_(1.0 - options.lambda) {
  assert(options_.Validate().ok());
}

void Ewma::Reset() { state_ = State(); }

double Ewma::LimitSd(double count, double decay) const {
  (void)count;
  if (options_.limits == EwmaLimits::kAsymptotic) return std::sqrt(asymptotic_var_);
  return std::sqrt(asymptotic_var_ * (1.0 - decay * decay));
}

DetectorEvent Ewma::Update(double z, const ObservationMark& mark) {
  const State before = state_;
  const DetectorEvent ev = Step(z, mark);
  if (Validate(state_).ok()) return ev;
  state_ = before;
  return Step(kNaN, mark);  // ignored, as a non-finite z
}

DetectorEvent Ewma::Step(double z, const ObservationMark& mark) {
  DetectorEvent ev;
  ev.direction = options_.direction;
  State& st = state_;
  const double sign_stat = options_.direction == Direction::kDown ? -1.0 : 1.0;
  auto statistic = [&](double v) {
    return options_.direction == Direction::kBoth ? std::fabs(v) : sign_stat * v;
  };
  if (!std::isfinite(z) || st.cycle.holdoff_left > 0.0) {
    if (std::isfinite(z)) st.cycle.holdoff_left -= 1.0;
    ev.statistic = statistic(st.z);
    ev.threshold = st.count > 0 ? options_.L * LimitSd(st.count, st.decay) : kNaN;
    return ev;
  }
  const double previous = st.z;
  st.z = decay_step_ * st.z + options_.lambda * z;
  st.count += 1.0;
  st.decay *= decay_step_;
  // Onset: the first observation of the current run of Z on one side of zero.
  // Branch-free: sign changes of Z are unpredictable on in-control data.
  const bool starts_b = (previous == 0.0) | ((previous > 0.0) != (st.z > 0.0));
  const std::uint64_t starts = 0 - static_cast<std::uint64_t>(starts_b);
  st.onset_seq = static_cast<std::int64_t>((static_cast<std::uint64_t>(mark.seq) & starts) |
                                           (static_cast<std::uint64_t>(st.onset_seq) & ~starts));
  st.onset_time = SelectBits(starts, mark.time, st.onset_time);
  const double keep = static_cast<double>(!starts_b);
  st.run_sum = st.run_sum * keep + z;
  st.run_count = st.run_count * keep + 1.0;
  const double limit = options_.L * LimitSd(st.count, st.decay);
  ev.threshold = limit;
  ev.statistic = statistic(st.z);
  const bool up = WatchesSide(options_.direction, Direction::kUp) && st.z > limit;
  const bool down = WatchesSide(options_.direction, Direction::kDown) && -st.z > limit;
  if (up || down) {
    ev.direction = up ? Direction::kUp : Direction::kDown;
    ev.onset_seq = st.onset_seq;
    ev.onset_time = st.onset_time;
    ev.shift = st.run_sum / st.run_count;
    ev.raised = !st.cycle.active;
    st.cycle.active = true;
    st.cycle.holdoff_left = static_cast<double>(options_.holdoff);
    const AlarmCycle cycle = st.cycle;
    st = State();
    st.cycle = cycle;
  } else if (st.cycle.active) {
    ev.cleared = true;
    st.cycle.active = false;
  }
  return ev;
}

Status Ewma::Validate(const State& s) {
  if (!ValidEwmaState(s))
    return Status::Error(ErrorCode::kInvalidState, "ewma state holds invalid values");
  return Status::Ok();
}

Status Ewma::Restore(const State& s) {
  if (Status v = Validate(s); !v.ok()) return v;
  state_ = s;
  return Status::Ok();
}

}  // namespace bayline::est
