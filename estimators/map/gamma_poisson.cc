#include "estimators/map/gamma_poisson.h"

#include <cassert>
#include <cmath>

#include "estimators/core/distributions.h"
#include "estimators/core/special_functions.h"
#include "estimators/map/posterior_util.h"

namespace bayline::est {

Status GammaPoisson::Options::Validate() const {
  if (!(a0 > 0) || !std::isfinite(a0)) return map_internal::Config("a0 must be > 0 and finite");
  if (!(b0 > 0) || !std::isfinite(b0)) return map_internal::Config("b0 must be > 0 and finite");
  return discount.Validate();
}

GammaPoisson::GammaPoisson(const Options& options) : options_(options) {
  assert(options.Validate().ok());
  state_.a = options_.a0;
  state_.b = options_.b0;
}

Status GammaPoisson::Update(const Sample& s, Innovation* out) {
  if (Status st = CheckCommonFields(s, 0); !st.ok()) return st;
  if (!map_internal::IsCount(s.y) || s.y < 0) {
    return map_internal::Domain("count must be a non-negative integer, got " + std::to_string(s.y));
  }
  if (!(s.exposure > 0)) {
    return map_internal::Domain("exposure must be > 0, got " + std::to_string(s.exposure));
  }
  const double y = std::round(s.y), e = s.exposure;
  const GammaRatePrior prior =
      DiscountedGammaRate(state_, options_.discount, options_.a0, options_.b0, s.time);
  const double a = prior.a, b = prior.b;
  // Negative binomial: log P(y) = lgamma(a+y) - lgamma(a) - lgamma(y+1)
  //                               + a log(b/(b+e)) + y log(e/(b+e)).
  const double log_p = special::LogGamma(a + y) - special::LogGamma(a) - special::LogGamma(y + 1) -
                       a * std::log1p(e / b) - (y > 0 ? y * std::log1p(b / e) : 0.0);
  const double mean = a * e / b, var = a * e * (b + e) / (b * b);
  Innovation inn;
  inn.valid = true;
  inn.prediction = mean;
  inn.residual = y - mean;
  inn.predictive_sd = std::sqrt(var);
  inn.standardized = inn.residual / inn.predictive_sd;
  inn.log_predictive = s.weight * log_p;
  return AdvanceGammaRate(prior, y, e, s, inn, "gamma-poisson", &state_, out);
}

ParameterReport GammaPoisson::Report(double level) const { return GammaRateReport(state_, level); }

Status GammaPoisson::Restore(const State& s) {
  if (Status st = ValidateGammaRateState(s); !st.ok()) return st;
  state_ = s;
  return Status::Ok();
}

}  // namespace bayline::est
