#include "estimators/ml/gaussian_ml.h"

#include <cmath>
#include <numbers>
#include <string>

#include "estimators/core/distributions.h"

namespace bayline::est {

void GaussianMl::State::Pack(StateWriter& w) const {
  w.Put(weight_sum);
  w.Put(weight_sq_sum);
  w.Put(shift);
  w.Put(mean_shifted);
  w.Put(m2);
  w.Put(count);
  w.Put(last_time);
}

Status GaussianMl::State::Unpack(StateReader& r) {
  r.Get(weight_sum);
  r.Get(weight_sq_sum);
  r.Get(shift);
  r.Get(mean_shifted);
  r.Get(m2);
  r.Get(count);
  r.Get(last_time);
  Status s = r.status();
  if (!s.ok()) return s;
  return Validate();
}

Status GaussianMl::State::Validate() const {
  const auto bad = [](const char* why) { return Status::Error(ErrorCode::kInvalidState, why); };
  if (!std::isfinite(weight_sum) || !std::isfinite(weight_sq_sum) || !std::isfinite(shift) || !std::isfinite(mean_shifted) ||
      !std::isfinite(m2) || !std::isfinite(count)) {
    return bad("gaussian state has a non-finite value");
  }
  if (weight_sum < 0 || weight_sq_sum < 0 || m2 < 0 || count < 0) return bad("gaussian state has a negative sum");
  if ((weight_sum == 0) != (count == 0)) return bad("gaussian state: weight sum and count disagree");
  if (weight_sq_sum > weight_sum * weight_sum * (1.0 + 1e-12)) return bad("gaussian state: W2 exceeds W^2");
  if (count == 0 && (shift != 0 || mean_shifted != 0 || m2 != 0)) return bad("gaussian state: moments without data");
  return ml_internal::CheckStoredTime(last_time);
}

GaussianMl::GaussianMl(const Options& options) : options_(options) {}

double GaussianMl::variance_ml() const {
  return state_.weight_sum > 0 ? state_.m2 / state_.weight_sum : kNaN;
}

double GaussianMl::variance_unbiased() const {
  if (!(state_.weight_sum > 0)) return kNaN;
  const double denom = state_.weight_sum - state_.weight_sq_sum / state_.weight_sum;
  return denom > 0 ? state_.m2 / denom : kNaN;
}

double GaussianMl::effective_sample_size() const {
  return state_.weight_sq_sum > 0 ? state_.weight_sum * state_.weight_sum / state_.weight_sq_sum : 0.0;
}

double GaussianMl::log_likelihood() const {
  const double v = variance_ml();
  if (!(v > 0)) return kNaN;
  return -0.5 * state_.weight_sum * (std::log(2.0 * std::numbers::pi * v) + 1.0);
}

Status GaussianMl::Update(const Sample& s, Innovation* out) {
  Status st = CheckCommonFields(s, 0);
  if (!st.ok()) return st;

  Innovation inn;
  const double v = variance_ml();
  if (v > 0) {
    const double sd = std::sqrt(v);
    const double m = mean();
    ml_internal::FillInnovation(s.y, m, sd, dist::NormalLogPdf(s.y, m, sd), &inn);
  }

  const double f = ml_internal::StepFactor(options_.forgetting, s.time, state_.last_time);
  State next = state_;
  next.weight_sum = f * state_.weight_sum + s.weight;
  next.weight_sq_sum = f * f * state_.weight_sq_sum + s.weight * s.weight;
  if (state_.count == 0) next.shift = s.y;
  const double u = s.y - next.shift;
  const double d = u - state_.mean_shifted;
  next.mean_shifted = state_.mean_shifted + (s.weight / next.weight_sum) * d;
  next.m2 = f * state_.m2 + s.weight * d * (u - next.mean_shifted);
  if (next.m2 < 0) next.m2 = 0;  // rounding only: d and (y - mean') have the same sign
  next.count = state_.count + 1;
  next.last_time = ml_internal::NextLastTime(s.time, state_.last_time);
  if (!std::isfinite(next.weight_sum) || !std::isfinite(next.weight_sq_sum) || !std::isfinite(next.mean_shifted) ||
      !std::isfinite(next.m2)) {
    return Status::Error(ErrorCode::kNumericalFailure,
                         "gaussian update overflows at y = " + std::to_string(s.y));
  }
  state_ = next;
  if (out) *out = inn;
  return Status::Ok();
}

ParameterReport GaussianMl::Report(double level) const {
  ParameterReport r;
  const double v = variance_ml();
  const bool ok = v > 0;
  const double w = state_.weight_sum;
  const double value[2] = {mean(), v};
  const double se[2] = {std::sqrt(v / w), v * std::sqrt(2.0 / w)};
  ml_internal::FillWaldReport(value, se, ok, level, &r);
  r.effective_n = w;
  r.log_likelihood = log_likelihood();
  return r;
}

Status GaussianMl::Restore(const State& state) {
  Status s = state.Validate();
  if (!s.ok()) return s;
  state_ = state;
  return Status::Ok();
}

}  // namespace bayline::est
