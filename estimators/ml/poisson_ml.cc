#include "estimators/ml/poisson_ml.h"

#include <cmath>
#include <string>


namespace bayline::est {

void PoissonMl::State::Pack(StateWriter& w) const {
  w.Put(weight_sum);
  w.Put(sum_y);
  w.Put(sum_exposure);
  w.Put(log_const);
  w.Put(count);
  w.Put(last_time);
}

Status PoissonMl::State::Unpack(StateReader& r) {
  r.Get(weight_sum);
  r.Get(sum_y);
  r.Get(sum_exposure);
  r.Get(log_const);
  r.Get(count);
  r.Get(last_time);
  Status s = r.status();
  if (!s.ok()) return s;
  return Validate();
}

Status PoissonMl::State::Validate() const {
  const auto bad = [](const char* why) { return Status::Error(ErrorCode::kInvalidState, why); };
  if (!std::isfinite(weight_sum) || !std::isfinite(sum_y) || !std::isfinite(sum_exposure) ||
      !std::isfinite(log_const) || !std::isfinite(count)) {
    return bad("poisson state has a non-finite value");
  }
  if (weight_sum < 0 || sum_y < 0 || sum_exposure < 0 || count < 0) return bad("poisson state has a negative sum");
  if ((weight_sum == 0) != (count == 0) || (sum_exposure == 0) != (count == 0)) {
    return bad("poisson state: sums and count disagree");
  }
  return ml_internal::CheckStoredTime(last_time);
}

double PoissonMl::rate() const {
  return state_.sum_exposure > 0 ? state_.sum_y / state_.sum_exposure : kNaN;
}

double PoissonMl::log_likelihood() const {
  const double r = rate();
  if (std::isnan(r)) return kNaN;
  const double y_term = state_.sum_y > 0 ? state_.sum_y * std::log(r) : 0.0;  // 0 log 0 = 0
  return y_term - r * state_.sum_exposure + state_.log_const;
}

Status PoissonMl::Update(const Sample& s, Innovation* out) {
  Status st = CheckCommonFields(s, 0);
  if (!st.ok()) return st;
  if (!(s.y >= 0)) return Status::Error(ErrorCode::kOutOfDomain, "poisson count must be >= 0, got " + std::to_string(s.y));
  if (!ml_internal::IsWholeNumber(s.y)) {
    return Status::Error(ErrorCode::kOutOfDomain, "poisson count must be a whole number, got " + std::to_string(s.y));
  }
  if (!(s.exposure > 0)) {
    return Status::Error(ErrorCode::kOutOfDomain, "exposure must be > 0, got " + std::to_string(s.exposure));
  }

  Innovation inn;
  const double r = rate();
  if (r > 0) {
    const double mu = r * s.exposure;
    const double log_mass = (s.y > 0 ? s.y * std::log(mu) : 0.0) - mu - ml_internal::LogFactorial(s.y);
    ml_internal::FillInnovation(s.y, mu, std::sqrt(mu), log_mass, &inn);
  }

  const double f = ml_internal::StepFactor(options_.forgetting, s.time, state_.last_time);
  State next = state_;
  next.weight_sum = f * state_.weight_sum + s.weight;
  next.sum_y = f * state_.sum_y + s.weight * s.y;
  next.sum_exposure = f * state_.sum_exposure + s.weight * s.exposure;
  next.log_const = f * state_.log_const +
                   s.weight * ((s.y > 0 && s.exposure != 1.0 ? s.y * std::log(s.exposure) : 0.0) - ml_internal::LogFactorial(s.y));
  next.count = state_.count + 1;
  next.last_time = ml_internal::NextLastTime(s.time, state_.last_time);
  if (!std::isfinite(next.weight_sum) || !std::isfinite(next.sum_y) || !std::isfinite(next.sum_exposure) ||
      !std::isfinite(next.log_const) || !(next.sum_exposure > 0)) {
    return Status::Error(ErrorCode::kNumericalFailure, "poisson update overflows at y = " + std::to_string(s.y));
  }
  state_ = next;
  if (out) *out = inn;
  return Status::Ok();
}

ParameterReport PoissonMl::Report(double level) const {
  ParameterReport rep;
  const double r = rate();
  const bool ok = state_.sum_y > 0 && state_.sum_exposure > 0;
  const double value[1] = {r};
  const double se[1] = {std::sqrt(r / state_.sum_exposure)};
  ml_internal::FillWaldReport(value, se, ok, level, &rep);
  rep.effective_n = state_.weight_sum;
  rep.log_likelihood = log_likelihood();
  return rep;
}

Status PoissonMl::Restore(const State& state) {
  Status s = state.Validate();
  if (!s.ok()) return s;
  state_ = state;
  return Status::Ok();
}

}  // namespace bayline::est
