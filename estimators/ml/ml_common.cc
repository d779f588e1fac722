#include "estimators/ml/ml_common.h"

#include <array>
#include <string>

#include "estimators/core/distributions.h"
#include "estimators/core/special_functions.h"

namespace bayline::est::ml_internal {

double LogFactorial(double n) {
  constexpr int kTable = 256;
  // Built once, on first use (thread-safe static initialisation), by summing logs: exact to
  // rounding.
  static const std::array<double, kTable> table = [] {
    std::array<double, kTable> t{};
    for (int i = 2; i < kTable; ++i) t[i] = t[i - 1] + std::log(static_cast<double>(i));
    return t;
  }();
  if (n >= 0 && n < kTable) return table[static_cast<int>(n)];
  return special::LogGamma(n + 1.0);
}

double WaldZ(double level) {
  if (!(level > 0.0 && level < 1.0)) return kNaN;
  return dist::NormalQuantile(0.5 + 0.5 * level);
}

void FillWaldReport(std::span<const double> value, std::span<const double> std_error,
                    bool identifiable, double level, ParameterReport* report) {
  const std::size_t k = value.size();
  report->level = level;
  report->identifiable = identifiable;
  report->value.assign(k, kNaN);
  report->std_error.assign(k, kNaN);
  report->lower.assign(k, kNaN);
  report->upper.assign(k, kNaN);
  report->posterior_mean.clear();
  if (!identifiable) return;
  const double z = WaldZ(level);
  for (std::size_t i = 0; i < k; ++i) {
    report->value[i] = value[i];
    report->std_error[i] = std_error[i];
    report->lower[i] = value[i] - z * std_error[i];
    report->upper[i] = value[i] + z * std_error[i];
  }
}

void FillInnovation(double y, double mean, double sd, double log_predictive, Innovation* out) {
  out->prediction = mean;
  out->residual = y - mean;
  out->predictive_sd = sd;
  out->standardized = (y - mean) / sd;
  out->log_predictive = log_predictive;
  out->valid = std::isfinite(mean) && std::isfinite(sd) && sd > 0.0 &&
               std::isfinite(out->standardized) && !std::isnan(log_predictive);
  if (!out->valid) *out = Innovation{};
}

Status CheckPositiveY(std::string_view family, double y) {
  if (y > 0) return Status::Ok();
  return Status::Error(ErrorCode::kOutOfDomain,
                       std::string(family) + " y must be > 0, got " + std::to_string(y));
}

Status CheckStoredTime(double last_time) {
  if (std::isinf(last_time))
    return Status::Error(ErrorCode::kInvalidState, "last time is infinite");
  return Status::Ok();
}

}  // namespace bayline::est::ml_internal
