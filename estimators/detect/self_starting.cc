#include "estimators/detect/self_starting.h"

#include <cassert>
#include <cmath>
#include <string>

#include "estimators/core/distributions.h"

namespace bayline::est {

double StandardizeRecursiveResidual(double w, double scale, double dof) {
  if (!std::isfinite(w) || !(scale > 0.0) || !std::isfinite(scale) || !(dof >= 1.0)) return kNaN;
  return dist::StudentTNormalScoreClamped(w / scale, dof);
}

namespace {
bool IsCount(double c) { return std::isfinite(c) && c >= 0.0 && c == std::floor(c); }
}  // namespace

void SelfStartingStandardizer::State::Pack(StateWriter& w) const {
  w.Put(count);
  w.Put(mean);
  w.Put(m2);
}

Status SelfStartingStandardizer::State::Unpack(StateReader& r) {
  r.Get(count) && r.Get(mean) && r.Get(m2);
  if (Status s = r.status(false); !s.ok()) return s;
  if (!IsCount(count) || !std::isfinite(mean) || !(m2 >= 0.0) || !std::isfinite(m2))
    return Status::Error(ErrorCode::kInvalidState, "self-starting state holds invalid values");
  return Status::Ok();
}

Status SelfStartingStandardizer::Update(double y, double* z) {
  if (!std::isfinite(y))
    return Status::Error(ErrorCode::kNonFinite, "y is not finite: " + std::to_string(y));
  State next = state_;
  double out = kNaN;
  const double n1 = next.count;  // n - 1 earlier observations
  if (n1 >= 2.0 && next.m2 > 0.0) {
    const double s = std::sqrt(next.m2 / (n1 - 1.0));
    const double t = (y - next.mean) / (s * std::sqrt(1.0 + 1.0 / n1));
    out = dist::StudentTNormalScoreClamped(t, n1 - 1.0);
  }
  next.count += 1.0;
  const double d = y - next.mean;
  next.mean += d / next.count;
  next.m2 += d * (y - next.mean);
  if (!std::isfinite(next.mean) || !std::isfinite(next.m2))
    return Status::Error(ErrorCode::kNumericalFailure,
                         "self-starting moments overflow at y = " + std::to_string(y));
  if (Status v = Validate(next); !v.ok())
    return Status::Error(ErrorCode::kNumericalFailure,
                         "update would leave an invalid state: " + v.message());
  state_ = next;
  if (z != nullptr) *z = out;
  return Status::Ok();
}

Status SelfStartingStandardizer::Validate(const State& s) {
  if (!IsCount(s.count) || !std::isfinite(s.mean) || !(s.m2 >= 0.0) || !std::isfinite(s.m2))
    return Status::Error(ErrorCode::kInvalidState, "self-starting state holds invalid values");
  return Status::Ok();
}

Status SelfStartingStandardizer::Restore(const State& s) {
  if (Status v = Validate(s); !v.ok()) return v;
  state_ = s;
  return Status::Ok();
}

void RecursiveResidualStandardizer::State::Pack(StateWriter& w) const {
  w.Put(count);
  w.Put(sum_sq);
}

Status RecursiveResidualStandardizer::State::Unpack(StateReader& r) {
  r.Get(count) && r.Get(sum_sq);
  if (Status s = r.status(false); !s.ok()) return s;
  if (!IsCount(count) || !(sum_sq >= 0.0) || !std::isfinite(sum_sq))
    return Status::Error(ErrorCode::kInvalidState, "recursive-residual state holds invalid values");
  return Status::Ok();
}

Status RecursiveResidualStandardizer::Update(double w, double* z) {
  if (std::isinf(w)) return Status::Error(ErrorCode::kNonFinite, "recursive residual is infinite");
  double out = kNaN;
  if (std::isnan(w)) {
    if (z != nullptr) *z = out;
    return Status::Ok();
  }
  if (state_.count >= 1.0 && state_.sum_sq > 0.0)
    out = StandardizeRecursiveResidual(w, std::sqrt(state_.sum_sq / state_.count), state_.count);
  State next = state_;
  next.sum_sq = state_.sum_sq + w * w;
  next.count += 1.0;
  if (!std::isfinite(next.sum_sq))
    return Status::Error(ErrorCode::kNumericalFailure,
                         "recursive residual sum of squares overflows");
  if (Status v = Validate(next); !v.ok())
    return Status::Error(ErrorCode::kNumericalFailure,
                         "update would leave an invalid state: " + v.message());
  state_ = next;
  if (z != nullptr) *z = out;
  return Status::Ok();
}

Status RecursiveResidualStandardizer::Validate(const State& s) {
  if (!IsCount(s.count) || !(s.sum_sq >= 0.0) || !std::isfinite(s.sum_sq))
    return Status::Error(ErrorCode::kInvalidState, "recursive-residual state holds invalid values");
  return Status::Ok();
}

Status RecursiveResidualStandardizer::Restore(const State& s) {
  if (Status v = Validate(s); !v.ok()) return v;
  state_ = s;
  return Status::Ok();
}

Status KnownStandardizerOptions::Validate() const {
  if (!std::isfinite(mean))
    return Status::Error(ErrorCode::kInvalidConfig, "in-control mean must be finite");
  if (!(std::isfinite(sd) && sd > 0.0))
    return Status::Error(ErrorCode::kInvalidConfig,
                         "in-control sd must be finite and > 0, got " + std::to_string(sd));
  return Status::Ok();
}

KnownStandardizer::KnownStandardizer(const KnownStandardizerOptions& options)
    : options_(options), inv_sd_(1.0 / options.sd) {
  assert(options_.Validate().ok());
}

}  // namespace bayline::est
