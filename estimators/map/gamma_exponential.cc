#include "estimators/map/gamma_exponential.h"

#include <cassert>
#include <cmath>

#include "estimators/core/distributions.h"
#include "estimators/map/posterior_util.h"

namespace bayline::est {

using map_internal::kInf;

Status GammaExponential::Options::Validate() const {
  if (!(a0 > 0) || !std::isfinite(a0)) return map_internal::Config("a0 must be > 0 and finite");
  if (!(b0 > 0) || !std::isfinite(b0)) return map_internal::Config("b0 must be > 0 and finite");
  return discount.Validate();
}

GammaExponential::GammaExponential(const Options& options) : options_(options) {
  assert(options.Validate().ok());
  state_.a = options_.a0;
  state_.b = options_.b0;
}

Status GammaExponential::Update(const Sample& s, Innovation* out) {
  if (Status st = CheckCommonFields(s, 0); !st.ok()) return st;
  if (!(s.y > 0)) return map_internal::Domain("y must be > 0, got " + std::to_string(s.y));
  const double y = s.y;
  const GammaRatePrior prior =
      DiscountedGammaRate(state_, options_.discount, options_.a0, options_.b0, s.time);
  const double a = prior.a, b = prior.b;
  // Lomax(a, b): log S(y) = -a log1p(y / b); density a / b (1 + y / b)^-(a+1).
  const double l1p = std::log1p(y / b);
  const double log_sf = -a * l1p;
  const double sf = std::exp(log_sf), cdf = -std::expm1(log_sf);
  Innovation inn;
  inn.valid = true;
  inn.prediction = a > 1 ? b / (a - 1) : kInf;
  inn.residual = a > 1 ? y - inn.prediction : kNaN;
  inn.predictive_sd = a > 2 ? b / (a - 1) * std::sqrt(a / (a - 2)) : kInf;
  inn.standardized = map_internal::NormalScoreFromTails(cdf, sf);
  inn.log_predictive = s.weight * (std::log(a) - std::log(b) - (a + 1) * l1p);

  return AdvanceGammaRate(prior, 1.0, y, s, inn, "gamma-exponential", &state_, out);
}

ParameterReport GammaExponential::Report(double level) const {
  return GammaRateReport(state_, level);
}

Status GammaExponential::Restore(const State& s) {
  if (Status st = ValidateGammaRateState(s); !st.ok()) return st;
  state_ = s;
  return Status::Ok();
}

}  // namespace bayline::est
