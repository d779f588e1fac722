#include "estimators/ml/exponential_ml.h"

#include <cmath>
#include <string>

namespace bayline::est {

void ExponentialMl::State::Pack(StateWriter& w) const {
  w.Put(weight_sum);
  w.Put(mean);
  w.Put(count);
  w.Put(last_time);
}

Status ExponentialMl::State::Unpack(StateReader& r) {
  r.Get(weight_sum);
  r.Get(mean);
  r.Get(count);
  r.Get(last_time);
  Status s = r.status();
  if (!s.ok()) return s;
  return Validate();
}

Status ExponentialMl::State::Validate() const {
  const auto bad = [](const char* why) { return Status::Error(ErrorCode::kInvalidState, why); };
  if (!std::isfinite(weight_sum) || !std::isfinite(mean) || !std::isfinite(count)) {
    return bad("exponential state has a non-finite value");
  }
  if (weight_sum < 0 || mean < 0 || count < 0) return bad("exponential state has a negative value");
  if ((weight_sum > 0) != (count > 0) || (mean > 0) != (count > 0)) {
    return bad("exponential state: sums and count disagree");
  }
  return ml_internal::CheckStoredTime(last_time);
}

double ExponentialMl::rate() const { return state_.mean > 0 ? 1.0 / state_.mean : kNaN; }

double ExponentialMl::log_likelihood() const {
  const double r = rate();
  return std::isnan(r) ? kNaN : state_.weight_sum * (std::log(r) - 1.0);
}

Status ExponentialMl::Update(const Sample& s, Innovation* out) {
  Status st = CheckCommonFields(s, 0);
  if (!st.ok()) return st;
  if (!(s.y > 0)) return Status::Error(ErrorCode::kOutOfDomain, "exponential y must be > 0, got " + std::to_string(s.y));

  Innovation inn;
  const double r = rate();
  if (r > 0) ml_internal::FillInnovation(s.y, state_.mean, state_.mean, std::log(r) - r * s.y, &inn);

  const double f = ml_internal::StepFactor(options_.forgetting, s.time, state_.last_time);
  State next = state_;
  next.weight_sum = f * state_.weight_sum + s.weight;
  next.mean = state_.mean + (s.weight / next.weight_sum) * (s.y - state_.mean);
  next.count = state_.count + 1;
  next.last_time = ml_internal::NextLastTime(s.time, state_.last_time);
  if (!std::isfinite(next.weight_sum) || !std::isfinite(next.mean) || !(next.mean > 0)) {
    return Status::Error(ErrorCode::kNumericalFailure, "exponential update fails at y = " + std::to_string(s.y));
  }
  state_ = next;
  if (out) *out = inn;
  return Status::Ok();
}

ParameterReport ExponentialMl::Report(double level) const {
  ParameterReport rep;
  const double r = rate();
  const bool ok = r > 0 && state_.weight_sum > 0;
  const double value[1] = {r};
  const double se[1] = {r / std::sqrt(state_.weight_sum)};
  ml_internal::FillWaldReport(value, se, ok, level, &rep);
  rep.effective_n = state_.weight_sum;
  rep.log_likelihood = log_likelihood();
  return rep;
}

Status ExponentialMl::Restore(const State& state) {
  Status s = state.Validate();
  if (!s.ok()) return s;
  state_ = state;
  return Status::Ok();
}

}  // namespace bayline::est
