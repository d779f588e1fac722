// The Gamma(a, b) posterior of a rate lambda (density proportional to lambda^(a-1) e^(-b lambda)),
// shared by the two conjugate models whose parameter is a rate: gamma-poisson (counts) and
// gamma-exponential (waiting times). They differ only in how an observation moves (a, b) and in
// their predictive; the state, its report and its validation are the same and live here.
//
// Report (one parameter, the rate): value = posterior mode (a - 1) / b (0 when a < 1),
// posterior_mean = a / b, std_error = sqrt(a) / b, equal-tailed credible interval from the gamma
// quantiles at (1 -/+ level) / 2; always identifiable (a proper prior); log_likelihood = the log
// marginal likelihood of the data seen.
#pragma once

#include "estimators/core/forgetting.h"
#include "estimators/core/report.h"
#include "estimators/core/sample.h"
#include "estimators/core/state_codec.h"
#include "estimators/core/status.h"

namespace bayline::est {

struct GammaRateState {
  double a = 1, b = 1e-3;
  double effective_n = 0, log_marginal = 0, count = 0;
  double last_time = kNaN;  // latest time among accepted observations (NaN: none timed)
  void Pack(StateWriter& w) const;
  Status Unpack(StateReader& r);  // kInvalidState on a short / long input
};

ParameterReport GammaRateReport(const GammaRateState& s, double level);

// Ok when a, b are positive and finite and the bookkeeping is consistent; else kInvalidState.
Status ValidateGammaRateState(const GammaRateState& s);

// The posterior an observation at `time` meets: (a, b) discounted toward the prior (a0, b0) by the
// forgetting factor delta of `discount` (a <- delta a + (1-delta) a0, likewise b; delta = 1 exact).
struct GammaRatePrior {
  double a = 1, b = 1, delta = 1;
};
GammaRatePrior DiscountedGammaRate(const GammaRateState& s, const ForgettingOptions& discount,
                                   double a0, double b0, double time);

// The conjugate step both models share: a' = prior.a + w da, b' = prior.b + w db for the sample's
// weight w, with the bookkeeping (effective_n, log marginal += inn.log_predictive, count, last
// time). kNumericalFailure naming `model` (nothing changed) when the innovation or the new state is
// not finite or fails ValidateGammaRateState; else replaces *state and copies inn to *out.
Status AdvanceGammaRate(const GammaRatePrior& prior, double da, double db, const Sample& s,
                        const Innovation& inn, const char* model, GammaRateState* state,
                        Innovation* out);

}  // namespace bayline::est
