#include "estimators/core/status.h"

namespace bayline::est {

std::string_view ErrorCodeName(ErrorCode code) {
  switch (code) {
    case ErrorCode::kOk:
      return "ok";
    case ErrorCode::kNonFinite:
      return "non_finite";
    case ErrorCode::kWrongRegressorCount:
      return "wrong_regressor_count";
    case ErrorCode::kOutOfDomain:
      return "out_of_domain";
    case ErrorCode::kInvalidWeight:
      return "invalid_weight";
    case ErrorCode::kInvalidConfig:
      return "invalid_config";
    case ErrorCode::kInvalidState:
      return "invalid_state";
    case ErrorCode::kNumericalFailure:
      return "numerical_failure";
  }
  return "unknown";
}

std::string Status::ToString() const {
  if (ok()) return "ok";
  std::string out(ErrorCodeName(code_));
  out += ": ";
  out += message_;
  return out;
}

}  // namespace bayline::est
