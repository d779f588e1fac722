#include "estimators/ml/gamma_ml.h"

#include <cmath>
#include <string>

#include "estimators/core/distributions.h"
#include "estimators/core/special_functions.h"
#include "estimators/ml/gamma_shape.h"

namespace bayline::est {

void GammaMl::State::Pack(StateWriter& w) const {
  w.Put(weight_sum);
  w.Put(ref);
  w.Put(mean_d);
  w.Put(mean_log);
  w.Put(shape);
  w.Put(count);
  w.Put(last_time);
}

Status GammaMl::State::Unpack(StateReader& r) {
  r.Get(weight_sum);
  r.Get(ref);
  r.Get(mean_d);
  r.Get(mean_log);
  r.Get(shape);
  r.Get(count);
  r.Get(last_time);
  Status s = r.status();
  if (!s.ok()) return s;
  return Validate();
}

Status GammaMl::State::Validate() const {
  const auto bad = [](const char* why) { return Status::Error(ErrorCode::kInvalidState, why); };
  if (!std::isfinite(weight_sum) || !std::isfinite(ref) || !std::isfinite(mean_d) || !std::isfinite(mean_log) ||
      !std::isfinite(count) || std::isinf(shape)) {
    return bad("gamma state has a non-finite value");
  }
  if (weight_sum < 0 || count < 0 || ref < 0) return bad("gamma state has a negative value");
  if ((weight_sum > 0) != (count > 0) || (ref > 0) != (count > 0)) return bad("gamma state: sums and count disagree");
  if (!(1.0 + mean_d > 0)) return bad("gamma state: mean is not positive");
  if (!std::isnan(shape) && !(shape > 0)) return bad("gamma state: shape is not positive");
  return ml_internal::CheckStoredTime(last_time);
}

double GammaMl::mean() const { return state_.count > 0 ? state_.ref * (1.0 + state_.mean_d) : kNaN; }

double GammaMl::rate() const { return state_.shape / mean(); }

double GammaMl::log_likelihood() const {
  const double k = state_.shape;
  if (std::isnan(k)) return kNaN;
  const double mean_log_y = std::log(state_.ref) + state_.mean_log;
  return state_.weight_sum * (k * std::log(rate()) + (k - 1.0) * mean_log_y - k - special::LogGamma(k));
}

Status GammaMl::Update(const Sample& s, Innovation* out) {
  Status st = CheckCommonFields(s, 0);
  if (!st.ok()) return st;
  if (!(s.y > 0)) return Status::Error(ErrorCode::kOutOfDomain, "gamma y must be > 0, got " + std::to_string(s.y));

  Innovation inn;
  if (!std::isnan(state_.shape)) {
    const double k = state_.shape, r = rate();
    ml_internal::FillInnovation(s.y, k / r, std::sqrt(k) / r, dist::GammaLogPdf(s.y, k, r), &inn);
  }

  const double f = ml_internal::StepFactor(options_.forgetting, s.time, state_.last_time);
  State next = state_;
  if (next.count == 0) next.ref = s.y;
  const double u = s.y / next.ref;
  next.weight_sum = f * state_.weight_sum + s.weight;
  const double g = s.weight / next.weight_sum;
  next.mean_d = state_.mean_d + g * ((u - 1.0) - state_.mean_d);
  next.mean_log = state_.mean_log + g * (std::log(u) - state_.mean_log);
  next.count = state_.count + 1;
  next.last_time = ml_internal::NextLastTime(s.time, state_.last_time);
  const double stat = std::log1p(next.mean_d) - next.mean_log;
  // s below ~1e-13 is indistinguishable from rounding in the two means: all values (nearly) equal.
  next.shape = stat > 1e-13 ? gamma_shape::Solve(stat, state_.shape) : kNaN;
  if (!std::isfinite(next.weight_sum) || !std::isfinite(next.mean_d) || !std::isfinite(next.mean_log) ||
      !(1.0 + next.mean_d > 0) || std::isinf(next.shape) || (!std::isnan(next.shape) && !(next.shape > 0)) ||
      (stat > 1e-13 && std::isnan(next.shape))) {
    return Status::Error(ErrorCode::kNumericalFailure, "gamma update fails at y = " + std::to_string(s.y));
  }
  state_ = next;
  if (out) *out = inn;
  return Status::Ok();
}

ParameterReport GammaMl::Report(double level) const {
  ParameterReport rep;
  const double k = state_.shape, r = rate(), w = state_.weight_sum;
  const bool ok = !std::isnan(k) && w > 0;
  double se[2] = {kNaN, kNaN};
  if (ok) {
    const double c = gamma_shape::InformationFactor(k);
    const double trigamma = c / k + 1.0 / k;  // psi'(k) = (k psi'(k) - 1 + 1) / k
    se[0] = std::sqrt(k / (w * c));
    se[1] = std::sqrt(trigamma * r * r / (w * c));
  }
  const double value[2] = {k, r};
  ml_internal::FillWaldReport(value, se, ok, level, &rep);
  rep.effective_n = w;
  rep.log_likelihood = log_likelihood();
  return rep;
}

Status GammaMl::Restore(const State& state) {
  Status s = state.Validate();
  if (!s.ok()) return s;
  state_ = state;
  return Status::Ok();
}

}  // namespace bayline::est
