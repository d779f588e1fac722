#include "estimators/ml/binomial_ml.h"

#include <cmath>
#include <string>


namespace bayline::est {

void BinomialMl::State::Pack(StateWriter& w) const {
  w.Put(weight_sum);
  w.Put(sum_y);
  w.Put(sum_trials);
  w.Put(log_const);
  w.Put(count);
  w.Put(last_time);
}

Status BinomialMl::State::Unpack(StateReader& r) {
  r.Get(weight_sum);
  r.Get(sum_y);
  r.Get(sum_trials);
  r.Get(log_const);
  r.Get(count);
  r.Get(last_time);
  Status s = r.status();
  if (!s.ok()) return s;
  return Validate();
}

Status BinomialMl::State::Validate() const {
  const auto bad = [](const char* why) { return Status::Error(ErrorCode::kInvalidState, why); };
  if (!std::isfinite(weight_sum) || !std::isfinite(sum_y) || !std::isfinite(sum_trials) ||
      !std::isfinite(log_const) || !std::isfinite(count)) {
    return bad("binomial state has a non-finite value");
  }
  if (weight_sum < 0 || sum_y < 0 || count < 0 || log_const < 0) return bad("binomial state has a negative sum");
  if (sum_y > sum_trials * (1.0 + 1e-12)) return bad("binomial state: successes exceed trials");
  if ((weight_sum == 0) != (count == 0) || (sum_trials == 0) != (count == 0)) {
    return bad("binomial state: sums and count disagree");
  }
  return ml_internal::CheckStoredTime(last_time);
}

double BinomialMl::probability() const {
  if (!(state_.sum_trials > 0)) return kNaN;
  return std::fmin(1.0, state_.sum_y / state_.sum_trials);
}

double BinomialMl::log_likelihood() const {
  const double p = probability();
  if (std::isnan(p)) return kNaN;
  const double fails = std::fmax(0.0, state_.sum_trials - state_.sum_y);
  double l = state_.log_const;
  if (state_.sum_y > 0) l += state_.sum_y * std::log(p);
  if (fails > 0) l += fails * std::log1p(-p);
  return l;
}

Status BinomialMl::Update(const Sample& s, Innovation* out) {
  Status st = CheckCommonFields(s, 0);
  if (!st.ok()) return st;
  if (!(s.trials >= 1) || !ml_internal::IsWholeNumber(s.trials)) {
    return Status::Error(ErrorCode::kOutOfDomain, "trials must be a whole number >= 1, got " + std::to_string(s.trials));
  }
  if (!(s.y >= 0) || !ml_internal::IsWholeNumber(s.y)) {
    return Status::Error(ErrorCode::kOutOfDomain, "successes must be a whole number >= 0, got " + std::to_string(s.y));
  }
  if (s.y > s.trials) {
    return Status::Error(ErrorCode::kOutOfDomain, "successes " + std::to_string(s.y) + " exceed trials " +
                                                      std::to_string(s.trials));
  }

  const double log_choose = (s.y == 0 || s.y == s.trials)
                                ? 0.0
                                : ml_internal::LogFactorial(s.trials) - ml_internal::LogFactorial(s.y) -
                                      ml_internal::LogFactorial(s.trials - s.y);
  Innovation inn;
  const double p = probability();
  if (p > 0 && p < 1) {
    const double mu = s.trials * p;
    const double log_mass = log_choose + s.y * std::log(p) + (s.trials - s.y) * std::log1p(-p);
    ml_internal::FillInnovation(s.y, mu, std::sqrt(mu * (1.0 - p)), log_mass, &inn);
  }

  const double f = ml_internal::StepFactor(options_.forgetting, s.time, state_.last_time);
  State next = state_;
  next.weight_sum = f * state_.weight_sum + s.weight;
  next.sum_y = f * state_.sum_y + s.weight * s.y;
  next.sum_trials = f * state_.sum_trials + s.weight * s.trials;
  next.log_const = f * state_.log_const + s.weight * std::fmax(0.0, log_choose);
  next.count = state_.count + 1;
  next.last_time = ml_internal::NextLastTime(s.time, state_.last_time);
  if (!std::isfinite(next.weight_sum) || !std::isfinite(next.sum_y) || !std::isfinite(next.sum_trials) ||
      !std::isfinite(next.log_const) || !(next.sum_trials > 0)) {
    return Status::Error(ErrorCode::kNumericalFailure, "binomial update overflows at trials = " + std::to_string(s.trials));
  }
  state_ = next;
  if (out) *out = inn;
  return Status::Ok();
}

ParameterReport BinomialMl::Report(double level) const {
  ParameterReport rep;
  const double p = probability();
  const bool ok = state_.sum_y > 0 && state_.sum_y < state_.sum_trials;
  const double value[1] = {p};
  const double se[1] = {std::sqrt(p * (1.0 - p) / state_.sum_trials)};
  ml_internal::FillWaldReport(value, se, ok, level, &rep);
  rep.effective_n = state_.weight_sum;
  rep.log_likelihood = log_likelihood();
  return rep;
}

Status BinomialMl::Restore(const State& state) {
  Status s = state.Validate();
  if (!s.ok()) return s;
  state_ = state;
  return Status::Ok();
}

}  // namespace bayline::est
