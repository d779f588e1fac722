// EstimatorSlot: one estimator of a channel behind one small interface (update, report, predict,
// inflate, pack / unpack), whatever its family. The concrete estimator is held in an InlineVariant
// (inline_variant.h) inside the channel's block (channel.h), so each slot takes its own
// estimator's size, not the largest one's: the fixed-size estimators inline (a gaussian channel's
// three need no heap node of their own), the large or dynamically sized ones (regressions) as a
// Boxed<T> (one pointer in the block).
//
// A slot is created in raw storage of StorageSize(spec, kind) bytes by Create and ended by
// Destroy; it cannot be copied or moved (its estimator lives past sizeof(EstimatorSlot)). For
// rolling back an update, SaveTo / RestoreFrom copy the estimator to and from a Backup (a
// std::variant reused across observations: same kind and size as last time, no allocation).
//
// Sample convention: callers pass the sample with the FULL regressor row for regression models
// (intercept column included) and an empty x for the other models; the gaussian ls slot supplies
// its own intercept column internally.
#pragma once

#include <span>
#include <utility>
#include <variant>
#include <vector>

#include "daemon/pipeline/boxed.h"
#include "daemon/pipeline/inline_variant.h"
#include "daemon/pipeline/resolved_spec.h"
#include "estimators/core/report.h"
#include "estimators/core/sample.h"
#include "estimators/core/state_codec.h"
#include "estimators/core/status.h"
#include "estimators/ls/linear_ml.h"
#include "estimators/ls/recursive_least_squares.h"
#include "estimators/ls/rls.h"
#include "estimators/map/beta_binomial.h"
#include "estimators/map/dynamic_linear_model.h"
#include "estimators/map/gamma_exponential.h"
#include "estimators/map/gamma_poisson.h"
#include "estimators/map/nig_regression.h"
#include "estimators/map/normal_gamma.h"
#include "estimators/ml/binomial_ml.h"
#include "estimators/ml/exponential_ml.h"
#include "estimators/ml/gamma_ml.h"
#include "estimators/ml/gaussian_ml.h"
#include "estimators/ml/glm_ml.h"
#include "estimators/ml/lognormal_ml.h"
#include "estimators/ml/poisson_ml.h"

namespace bayline::pipeline {

// Checks an observation against the model of `spec` and every estimator and detector it runs,
// without touching any state: the common fields (CheckCommonFields on the full row), the model's
// domain (y > 0 for lognormal / exponential / gamma, whole counts for poisson / binomial /
// logistic / poisson_regression, trials >= 1, exposure > 0). Ok means no estimator will reject it
// except for a numerical failure.
est::Status CheckObservation(const ResolvedSpec& spec, const est::Sample& sample);

// The gaussian model's ls estimator: recursive least squares on the intercept alone (Update
// supplies the column of ones), whose report adds the residual variance s^2 = S / dof as a second
// parameter, with se s^2 sqrt(2 / dof) and the chi-square interval
//   [dof s^2 / chi2_{(1+level)/2}(dof), dof s^2 / chi2_{(1-level)/2}(dof)]
// (NaN until identified with dof > 0). It does not predict: a gaussian channel has no regressors.
class GaussianLs {
 public:
  using Ls = est::RecursiveLeastSquares<1>;
  using State = Ls::State;

  // Default options make the empty alternative of a Backup (EstimatorSlot::SaveTo assigns over it).
  explicit GaussianLs(const est::RlsOptions& options = {}) : ls_(options, 1) {}

  // sample.x is ignored (the row is the intercept); otherwise as RecursiveLeastSquares::Update.
  est::Status Update(const est::Sample& sample, est::Innovation* innovation,
                     est::RecursiveResidual* rr);
  est::ParameterReport Report(double level) const;
  est::Status InflateUncertainty(double factor) { return ls_.InflateUncertainty(factor); }
  const State& state() const { return ls_.state(); }
  est::Status Restore(const State& state) { return ls_.Restore(state); }

 private:
  Ls ls_;
};

// What a slot can do follows from its estimator's type (the concepts in estimator_slot.cc): it
// predicts when the estimator has Predict(x, level) returning a Prediction or Predict(x, level,
// &out) returning a Status, inflates when it has InflateUncertainty(factor), and passes recursive
// residuals when its Update takes one. Adding an estimator means adding its type
// to Alternatives and its (model, kind) to the mapping in estimator_slot.cc.
class EstimatorSlot {
 public:
  using GaussianLs = pipeline::GaussianLs;
  // Every estimator type a slot can hold.
  template <template <typename...> class Holder>
  using Alternatives =
      Holder<GaussianLs, est::GaussianMl, est::LognormalMl, est::PoissonMl, est::BinomialMl,
             est::ExponentialMl, est::GammaMl, est::NormalGamma, est::BetaBinomial,
             est::GammaPoisson, est::GammaExponential, Boxed<est::Rls>, Boxed<est::LinearMl>,
             Boxed<est::NigRegression<>>, Boxed<est::DynamicLinearModel<>>,
             Boxed<est::LogisticRegressionMl>, Boxed<est::PoissonRegressionMl>>;
  using Impl = Alternatives<InlineVariant>;
  using Backup = Alternatives<std::variant>;
  static constexpr std::size_t kAlignment = Impl::kAlignment;

  // Bytes of storage (aligned to kAlignment) for the estimator of `kind` for `spec` (the kind must
  // be allowed by the spec's model).
  static std::size_t StorageSize(const ResolvedSpec& spec, EstimatorKind kind);
  // A fresh estimator of `kind` for `spec`, constructed in `storage`.
  static EstimatorSlot* Create(void* storage, const ResolvedSpec& spec, EstimatorKind kind);
  // Ends the estimator's lifetime; the storage may then be released.
  void Destroy() { impl_.Destroy(); }

  EstimatorSlot(const EstimatorSlot&) = delete;
  EstimatorSlot& operator=(const EstimatorSlot&) = delete;

  // Absorbs the sample; strong guarantee (rejection changes nothing). *innovation gets the
  // one-step innovation, *rr the recursive residual (valid only for ls).
  est::Status Update(const est::Sample& sample, est::Innovation* innovation,
                     est::RecursiveResidual* rr);
  // Parameters in the spec's parameter_names order (gaussian ls: mean and the residual variance
  // with its chi-square interval).
  est::ParameterReport Report(double level) const;
  // Prediction of a new y at the full regressor row x; CanPredict is false when this estimator
  // cannot predict (Predict then returns an invalid prediction).
  bool CanPredict() const;
  est::Prediction Predict(std::span<const double> x, double level) const;
  // Multiplies the parameter covariance by factor > 1 (ls, and ml of linear models); Inflate gives
  // kInvalidConfig when CanInflate is false.
  bool CanInflate() const;
  est::Status Inflate(double factor);

  // Copies the estimator into *backup (assigning in place when it already holds the same kind);
  // RestoreFrom copies it back (backup must come from SaveTo of a slot of the same kind).
  void SaveTo(Backup* backup) const;
  void RestoreFrom(const Backup& backup);

  void Pack(std::vector<double>* out) const;
  // Validates a packed state and replaces the current one; kInvalidState (nothing changed) if it
  // does not unpack or fails the estimator's checks.
  est::Status Unpack(std::span<const double> values);

 private:
  template <typename T, typename Factory>
  EstimatorSlot(std::in_place_type_t<T> type, Factory&& factory)
      : impl_(type, std::forward<Factory>(factory)) {}

  Impl impl_;  // the only member: the estimator follows it in the same storage
};

// True when `kind` can inflate its covariance on an alarm for `model` (config validation).
bool EstimatorCanInflate(Model model, EstimatorKind kind);

}  // namespace bayline::pipeline
