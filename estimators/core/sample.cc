#include "estimators/core/sample.h"

#include <string>

namespace bayline::est {

namespace {
std::string Num(double v) { return std::to_string(v); }
}  // namespace

Status DescribeCommonFieldsProblem(const Sample& s, std::size_t expected_regressors) {
  if (!std::isfinite(s.y)) return Status::Error(ErrorCode::kNonFinite, "y is " + Num(s.y));
  if (s.x.size() != expected_regressors) {
    return Status::Error(ErrorCode::kWrongRegressorCount,
                         "expected " + std::to_string(expected_regressors) + " regressors, got " +
                             std::to_string(s.x.size()));
  }
  for (std::size_t i = 0; i < s.x.size(); ++i) {
    if (!std::isfinite(s.x[i])) {
      return Status::Error(ErrorCode::kNonFinite,
                           "regressor " + std::to_string(i) + " is " + Num(s.x[i]));
    }
  }
  if (!std::isfinite(s.weight))
    return Status::Error(ErrorCode::kNonFinite, "weight is " + Num(s.weight));
  if (!(s.weight > 0))
    return Status::Error(ErrorCode::kInvalidWeight, "weight must be > 0, got " + Num(s.weight));
  if (!std::isfinite(s.trials))
    return Status::Error(ErrorCode::kNonFinite, "trials is " + Num(s.trials));
  if (!std::isfinite(s.exposure))
    return Status::Error(ErrorCode::kNonFinite, "exposure is " + Num(s.exposure));
  if (std::isinf(s.time)) return Status::Error(ErrorCode::kNonFinite, "time is " + Num(s.time));
  return Status::Ok();
}

}  // namespace bayline::est
