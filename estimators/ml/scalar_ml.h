// ScalarMl<Family>: the online maximum-likelihood estimator of a one-dimensional family (gaussian,
// lognormal, poisson, binomial, exponential, gamma) over exponentially weighted sufficient
// statistics (ml_common.h). What every family shares lives here: the options, the state's common
// fields and its packing, restore, the update's order of work and the report's shape. The family
// supplies only its math.
//
// State = ScalarMlState<Stats>: the family's statistics (Stats) plus
//   W          = sum_i a_i         (weight_sum)
//   count      accepted observations, undiscounted
//   last_time  time of the latest accepted timed sample (NaN before one)
// packed as W, the family's fields in Stats::Fields order, count, last_time.
//
// Invariants (ScalarMlState::Validate, the same check for Restore / Unpack and for the state an
// Update would produce): W and count finite and >= 0, W = 0 iff count = 0, last_time NaN or finite,
// and the family's own (Stats::Check). So every state an Update accepts can be restored.
//
// Update(s): rejects a sample failing CheckCommonFields(s, 0) or the family's domain
// (Family::CheckSample); computes the plug-in predictive of the state before the update
// (Family::Predictive); forms the candidate state with forgetting factor f (ml_common.h)
//   W' = f W + w,  Family::Step for the family's statistics,  count' = count + 1,  last_time'
// and commits it only if it passes Validate (otherwise kNumericalFailure, nothing changed).
//
// A Family provides (all static):
//   Stats                         plain struct of the family's fields (defaults = no data) with
//                                 kName, Fields(state) -> array of pointers in pack order, and
//                                 Check(const ScalarMlState<Stats>&) for its invariants
//   kParameterNames               report order
//   CheckSample(s)                the model's domain (kOutOfDomain naming the field)
//   Predictive(state, s, *inn)    plug-in predictive of s.y; leaves *inn invalid when undefined
//   Step(state, f, s, *next)      the family's statistics of *next (next->weight_sum is W')
//   Estimate(state, value, se)    the estimates and standard errors; returns identifiable
//   LogLikelihood(state)          at the estimate (NaN when undefined)
//
// Thread safety: none; one owner per object (the daemon's worker for the channel).
#pragma once

#include <array>
#include <cstddef>
#include <string_view>

#include "estimators/core/report.h"
#include "estimators/core/sample.h"
#include "estimators/core/state_codec.h"
#include "estimators/ml/ml_common.h"

namespace bayline::est {

template <typename Stats>
struct ScalarMlState : Stats {
  double weight_sum = 0.0;  // W = sum a_i
  double count = 0.0;       // accepted observations, undiscounted
  double last_time = kNaN;  // latest accepted timed sample

  void Pack(StateWriter& w) const;
  // Reads the fields in Pack order; kInvalidState if the input is short or fails Validate. On
  // failure *this is unspecified; Restore() is the safe path.
  Status Unpack(StateReader& r);
  // The invariants above; kInvalidState naming the first one broken.
  Status Validate() const;
};

template <typename Family>
class ScalarMl {
 public:
  using Options = MlOptions;
  using State = ScalarMlState<typename Family::Stats>;
  static constexpr auto kParameterNames = Family::kParameterNames;

  // Precondition: options.Validate().ok() (checked at configuration time by the caller).
  explicit ScalarMl(const Options& options = {}) : options_(options) {}

  // Absorbs one observation (x empty, weight > 0 finite, y in the family's domain). On success
  // fills *out (if not null) with the plug-in predictive of the state BEFORE the update. On
  // rejection returns the Status naming the field (or kNumericalFailure when the new state would
  // break the invariants) and nothing changes (state and *out untouched).
  Status Update(const Sample& s, Innovation* out = nullptr);

  // value = the family's parameters in kParameterNames order, with Fisher-information standard
  // errors and Wald intervals at `level` (NaN vectors while not identifiable); effective_n = W;
  // log_likelihood at the estimate.
  ParameterReport Report(double level = 0.95) const;

  double log_likelihood() const { return Family::LogLikelihood(state_); }

  const Options& options() const { return options_; }
  const State& state() const { return state_; }
  // Validates `state` and replaces the current one; on rejection nothing changes.
  Status Restore(const State& state);

 private:
  Options options_;
  State state_;
};

}  // namespace bayline::est
