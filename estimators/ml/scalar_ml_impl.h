// Member definitions of ScalarMlState and ScalarMl (scalar_ml.h). Included only by the family
// .cc files, each of which instantiates its own family explicitly:
//   template struct ScalarMlState<XFamily::Stats>;
//   template class ScalarMl<XFamily>;
#pragma once

#include <cmath>
#include <string>
#include <string_view>

#include "estimators/ml/scalar_ml.h"

namespace bayline::est {
namespace ml_internal {

// The family's name in messages: Family::kName where the family has one (lognormal, whose state
// is the gaussian's), else its statistics' name.
template <typename Family>
constexpr std::string_view FamilyName() {
  if constexpr (requires { Family::kName; }) {
    return Family::kName;
  } else {
    return Family::Stats::kName;
  }
}

}  // namespace ml_internal

template <typename Stats>
void ScalarMlState<Stats>::Pack(StateWriter& w) const {
  w.Put(weight_sum);
  for (const double* v : Stats::Fields(*this)) w.Put(*v);
  w.Put(count);
  w.Put(last_time);
}

template <typename Stats>
Status ScalarMlState<Stats>::Unpack(StateReader& r) {
  r.Get(weight_sum);
  for (double* v : Stats::Fields(*this)) r.Get(*v);
  r.Get(count);
  r.Get(last_time);
  Status s = r.status();
  if (!s.ok()) return s;
  return Validate();
}

template <typename Stats>
Status ScalarMlState<Stats>::Validate() const {
  const auto bad = [](const char* why) {
    return Status::Error(ErrorCode::kInvalidState, std::string(Stats::kName) + " state: " + why);
  };
  if (!std::isfinite(weight_sum) || !std::isfinite(count)) return bad("non-finite weight or count");
  if (weight_sum < 0 || count < 0) return bad("negative weight or count");
  if ((weight_sum == 0) != (count == 0)) return bad("weight sum and count disagree");
  Status s = Stats::Check(*this);
  if (!s.ok()) return s;
  return ml_internal::CheckStoredTime(last_time);
}

template <typename Family>
Status ScalarMl<Family>::Update(const Sample& s, Innovation* out) {
  Status st = CheckCommonFields(s, 0);
  if (!st.ok()) return st;
  st = Family::CheckSample(s);
  if (!st.ok()) return st;

  Innovation inn;
  Family::Predictive(state_, s, &inn);

  const double f = ml_internal::StepFactor(options_.forgetting, s.time, state_.last_time);
  State next = state_;
  next.weight_sum = f * state_.weight_sum + s.weight;
  Family::Step(state_, f, s, &next);
  next.count = state_.count + 1;
  next.last_time = ml_internal::NextLastTime(s.time, state_.last_time);
  st = next.Validate();
  if (!st.ok()) {
    return Status::Error(ErrorCode::kNumericalFailure,
                         std::string(ml_internal::FamilyName<Family>()) + " update fails at y = " +
                             std::to_string(s.y) + " (" + st.message() + ")");
  }
  state_ = next;
  if (out) *out = inn;
  return Status::Ok();
}

template <typename Family>
ParameterReport ScalarMl<Family>::Report(double level) const {
  constexpr std::size_t k = kParameterNames.size();
  std::array<double, k> value, se;
  value.fill(kNaN);
  se.fill(kNaN);
  const bool identifiable = Family::Estimate(state_, value, se);
  ParameterReport rep;
  ml_internal::FillWaldReport(value, se, identifiable, level, &rep);
  rep.effective_n = state_.weight_sum;
  rep.log_likelihood = Family::LogLikelihood(state_);
  return rep;
}

template <typename Family>
Status ScalarMl<Family>::Restore(const State& state) {
  Status s = state.Validate();
  if (!s.ok()) return s;
  state_ = state;
  return Status::Ok();
}

}  // namespace bayline::est
