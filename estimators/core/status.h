// Status: the result of an operation that can reject its input.
//
// Error tiers used throughout estimators/ (and the layers above):
//   * bad data or configuration from outside -> a non-ok Status naming the problem; the object that
//     rejected it is left exactly as it was (strong guarantee);
//   * "nothing yet" (e.g. an estimate before the data identify it) is not an error: it is a flag in
//     the result (see report.h);
//   * programmer errors (violated preconditions documented as such) are asserts.
//
// An ok Status carries no message and does not allocate. Status is [[nodiscard]]: a caller handles
// it, or discards it with (void) and a comment saying why that is right.
#pragma once

#include <string>
#include <string_view>

namespace bayline::est {

// Why something was rejected. The names returned by ErrorCodeName() are stable: they appear in
// input-error publications and counters.
enum class ErrorCode {
  kOk = 0,
  kNonFinite,            // y, a regressor, weight, trials, exposure or time is NaN or infinite
  kWrongRegressorCount,  // the regressor row does not have the model's length
  kOutOfDomain,       // a value outside the model's support (negative count, y <= 0 for gamma...)
  kInvalidWeight,     // weight <= 0
  kInvalidConfig,     // an option outside its documented range
  kInvalidState,      // a captured state failed validation on Restore / Unpack
  kNumericalFailure,  // the update would produce a non-finite or indefinite result
};

// Stable snake_case name of a code, e.g. "non_finite".
std::string_view ErrorCodeName(ErrorCode code);

class [[nodiscard]] Status {
 public:
  Status() = default;  // ok
  static Status Ok() { return Status(); }
  static Status Error(ErrorCode code, std::string message) {
    Status s;
    s.code_ = code;
    s.message_ = std::move(message);
    return s;
  }

  bool ok() const { return code_ == ErrorCode::kOk; }
  ErrorCode code() const { return code_; }
  // Human-readable reason, naming the offending field and value. Empty when ok.
  const std::string& message() const { return message_; }
  // "ok" or "<code name>: <message>".
  std::string ToString() const;

 private:
  ErrorCode code_ = ErrorCode::kOk;
  std::string message_;
};

}  // namespace bayline::est
