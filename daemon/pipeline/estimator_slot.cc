#include "daemon/pipeline/estimator_slot.h"

#include <cmath>
#include <concepts>
#include <string>
#include <type_traits>
#include <utility>

#include "daemon/pipeline/packing.h"
#include "estimators/core/distributions.h"

namespace bayline::pipeline {
namespace {

using est::ErrorCode;
using est::Status;

constexpr double kOne[] = {1.0};

bool IsWhole(double v) { return std::isfinite(v) && std::floor(v) == v; }

// An estimator held inline or boxed, as the visitors see it.
template <typename Slot>
using Unwrapped = std::remove_cvref_t<decltype(Unwrap(std::declval<Slot&>()))>;

// Capabilities, read off the estimator's members.
template <typename E>
concept PassesRecursiveResidual = requires(E& e, const est::Sample& s, est::Innovation* innovation,
                                           est::RecursiveResidual* rr) {
  { e.Update(s, innovation, rr) } -> std::same_as<Status>;
};
template <typename E>
concept PredictsWithStatus = requires(const E& e, std::span<const double> x, double level,
                                      est::Prediction* out) {
  { e.Predict(x, level, out) } -> std::same_as<Status>;
};
template <typename E>
concept PredictsValue = requires(const E& e, std::span<const double> x, double level) {
  { e.Predict(x, level) } -> std::same_as<est::Prediction>;
};
template <typename E>
concept Predicts = PredictsWithStatus<E> || PredictsValue<E>;
template <typename E>
concept Inflates = requires(E& e, double factor) {
  { e.InflateUncertainty(factor) } -> std::same_as<Status>;
};

// The one place that maps (model, kind) to the estimator type: calls
// make(std::type_identity<T>, factory) where factory(spec) returns the fresh estimator for the
// spec (called only when one is constructed). For a linear model's map estimator the type depends
// on random_walk as well.
template <typename Make>
decltype(auto) WithEstimatorType(Model model, EstimatorKind kind, bool random_walk, Make&& make) {
  using est::Rls;
  using std::type_identity;
  using Spec = const ResolvedSpec&;
  switch (model) {
    case Model::kGaussian:
      if (kind == EstimatorKind::kLs) {
        return make(type_identity<GaussianLs>{}, [](Spec s) { return GaussianLs(s.rls); });
      }
      if (kind == EstimatorKind::kMl) {
        return make(type_identity<est::GaussianMl>{}, [](Spec s) { return est::GaussianMl(s.ml); });
      }
      return make(type_identity<est::NormalGamma>{},
                  [](Spec s) { return est::NormalGamma(s.normal_gamma); });
    case Model::kLinear:
      if (kind == EstimatorKind::kLs) {
        return make(type_identity<Boxed<Rls>>{},
                    [](Spec s) { return Boxed<Rls>(Rls(s.rls, s.p)); });
      }
      if (kind == EstimatorKind::kMl) {
        return make(type_identity<Boxed<est::LinearMl>>{}, [](Spec s) {
          est::RlsOptions o = s.rls;
          o.robust = false;  // ml is the gaussian likelihood, not a Huber M-estimate
          return Boxed<est::LinearMl>(est::LinearMl(o, s.p));
        });
      }
      if (random_walk) {
        return make(type_identity<Boxed<est::DynamicLinearModel<>>>{}, [](Spec s) {
          return Boxed<est::DynamicLinearModel<>>(est::DynamicLinearModel<>(s.dlm));
        });
      }
      return make(type_identity<Boxed<est::NigRegression<>>>{},
                  [](Spec s) { return Boxed<est::NigRegression<>>(est::NigRegression<>(s.nig)); });
    case Model::kLognormal:
      return make(type_identity<est::LognormalMl>{}, [](Spec s) { return est::LognormalMl(s.ml); });
    case Model::kPoisson:
      if (kind == EstimatorKind::kMl) {
        return make(type_identity<est::PoissonMl>{}, [](Spec s) { return est::PoissonMl(s.ml); });
      }
      return make(type_identity<est::GammaPoisson>{},
                  [](Spec s) { return est::GammaPoisson(s.gamma_poisson); });
    case Model::kBinomial:
      if (kind == EstimatorKind::kMl) {
        return make(type_identity<est::BinomialMl>{}, [](Spec s) { return est::BinomialMl(s.ml); });
      }
      return make(type_identity<est::BetaBinomial>{},
                  [](Spec s) { return est::BetaBinomial(s.beta_binomial); });
    case Model::kExponential:
      if (kind == EstimatorKind::kMl) {
        return make(type_identity<est::ExponentialMl>{},
                    [](Spec s) { return est::ExponentialMl(s.ml); });
      }
      return make(type_identity<est::GammaExponential>{},
                  [](Spec s) { return est::GammaExponential(s.gamma_exponential); });
    case Model::kGamma:
      return make(type_identity<est::GammaMl>{}, [](Spec s) { return est::GammaMl(s.ml); });
    case Model::kLogistic:
      return make(type_identity<Boxed<est::LogisticRegressionMl>>{}, [](Spec s) {
        return Boxed<est::LogisticRegressionMl>(est::LogisticRegressionMl(s.glm));
      });
    case Model::kPoissonRegression:
      return make(type_identity<Boxed<est::PoissonRegressionMl>>{}, [](Spec s) {
        return Boxed<est::PoissonRegressionMl>(est::PoissonRegressionMl(s.glm));
      });
  }
  return make(type_identity<est::GaussianMl>{}, [](Spec s) { return est::GaussianMl(s.ml); });
}

template <typename Make>
decltype(auto) WithEstimatorType(const ResolvedSpec& s, EstimatorKind kind, Make&& make) {
  return WithEstimatorType(s.model, kind, s.random_walk, std::forward<Make>(make));
}

}  // namespace

Status GaussianLs::Update(const est::Sample& sample, est::Innovation* innovation,
                          est::RecursiveResidual* rr) {
  est::Sample with_intercept = sample;
  with_intercept.x = kOne;
  return ls_.Update(with_intercept, innovation, rr);
}

est::ParameterReport GaussianLs::Report(double level) const {
  est::ParameterReport r = ls_.Report(level);
  const double dof = ls_.dof();
  const double s2 = ls_.residual_variance();
  double se = est::kNaN, lo = est::kNaN, hi = est::kNaN;
  if (r.identifiable && dof > 0 && std::isfinite(s2)) {
    se = s2 * std::sqrt(2.0 / dof);
    if (level > 0 && level < 1) {
      const double q = (1.0 - level) / 2.0;
      lo = dof * s2 / est::dist::ChiSquaredQuantile(1.0 - q, dof);
      hi = dof * s2 / est::dist::ChiSquaredQuantile(q, dof);
    }
  }
  r.value.push_back(r.identifiable ? s2 : est::kNaN);
  r.std_error.push_back(se);
  r.lower.push_back(lo);
  r.upper.push_back(hi);
  return r;
}

Status CheckObservation(const ResolvedSpec& spec, const est::Sample& s) {
  const std::size_t expected = IsRegressionModel(spec.model) ? static_cast<std::size_t>(spec.p) : 0;
  if (s.x.size() != expected) {
    const std::size_t wire = s.x.size() - (spec.intercept && !s.x.empty() ? 1 : 0);
    return Status::Error(ErrorCode::kWrongRegressorCount, "x has " + std::to_string(wire) +
                                                              " entries, channel expects " +
                                                              std::to_string(spec.regressor_count));
  }
  Status st = est::CheckCommonFields(s, expected);
  if (!st.ok()) return st;
  switch (spec.model) {
    case Model::kLognormal:
    case Model::kExponential:
    case Model::kGamma:
      if (!(s.y > 0)) {
        return Status::Error(ErrorCode::kOutOfDomain, "y must be > 0 for model " +
                                                          std::string(ModelName(spec.model)) +
                                                          ", got " + std::to_string(s.y));
      }
      break;
    case Model::kPoisson:
    case Model::kPoissonRegression:
      if (!IsWhole(s.y) || s.y < 0) {
        return Status::Error(ErrorCode::kOutOfDomain,
                             "y must be a whole count >= 0, got " + std::to_string(s.y));
      }
      if (!(s.exposure > 0)) {
        return Status::Error(ErrorCode::kOutOfDomain,
                             "exposure must be > 0, got " + std::to_string(s.exposure));
      }
      break;
    case Model::kBinomial:
    case Model::kLogistic:
      if (!IsWhole(s.trials) || s.trials < 1) {
        return Status::Error(ErrorCode::kOutOfDomain,
                             "trials must be a whole number >= 1, got " + std::to_string(s.trials));
      }
      if (!IsWhole(s.y) || s.y < 0 || s.y > s.trials) {
        return Status::Error(
            ErrorCode::kOutOfDomain,
            "y must be a whole number of successes in [0, trials], got " + std::to_string(s.y));
      }
      break;
    case Model::kLinear:
    case Model::kGaussian:
      break;
  }
  return Status::Ok();
}

bool EstimatorCanInflate(Model model, EstimatorKind kind) {
  // Neither map estimator of a linear model inflates, so random_walk does not matter here.
  return WithEstimatorType(model, kind, /*random_walk=*/false, [](auto type, auto&&) {
    return Inflates<Unwrapped<typename decltype(type)::type>>;
  });
}

std::size_t EstimatorSlot::StorageSize(const ResolvedSpec& spec, EstimatorKind kind) {
  return WithEstimatorType(spec, kind, [](auto type, auto&&) {
    return Impl::StorageSizeOf<typename decltype(type)::type>();
  });
}

EstimatorSlot* EstimatorSlot::Create(void* storage, const ResolvedSpec& spec, EstimatorKind kind) {
  return WithEstimatorType(spec, kind, [&](auto type, auto&& factory) {
    using T = typename decltype(type)::type;
    return ::new (storage) EstimatorSlot(std::in_place_type<T>, [&] { return factory(spec); });
  });
}

Status EstimatorSlot::Update(const est::Sample& sample, est::Innovation* innovation,
                             est::RecursiveResidual* rr) {
  return impl_.Visit([&](auto& slot) -> Status {
    auto& e = Unwrap(slot);
    if constexpr (PassesRecursiveResidual<Unwrapped<decltype(slot)>>) {
      return e.Update(sample, innovation, rr);
    } else {
      return e.Update(sample, innovation);
    }
  });
}

est::ParameterReport EstimatorSlot::Report(double level) const {
  return impl_.Visit([&](const auto& slot) { return Unwrap(slot).Report(level); });
}

bool EstimatorSlot::CanPredict() const {
  return impl_.Visit([](const auto& slot) { return Predicts<Unwrapped<decltype(slot)>>; });
}

est::Prediction EstimatorSlot::Predict(std::span<const double> x, double level) const {
  return impl_.Visit([&](const auto& slot) {
    using E = Unwrapped<decltype(slot)>;
    est::Prediction out;
    out.level = level;
    if constexpr (PredictsWithStatus<E>) {
      if (!Unwrap(slot).Predict(x, level, &out).ok()) out.valid = false;
    } else if constexpr (PredictsValue<E>) {
      out = Unwrap(slot).Predict(x, level);
    }
    return out;
  });
}

bool EstimatorSlot::CanInflate() const {
  return impl_.Visit([](const auto& slot) { return Inflates<Unwrapped<decltype(slot)>>; });
}

Status EstimatorSlot::Inflate(double factor) {
  return impl_.Visit([&](auto& slot) -> Status {
    if constexpr (Inflates<Unwrapped<decltype(slot)>>) {
      return Unwrap(slot).InflateUncertainty(factor);
    } else {
      return Status::Error(ErrorCode::kInvalidConfig,
                           "this estimator cannot inflate its uncertainty");
    }
  });
}

void EstimatorSlot::SaveTo(Backup* backup) const {
  impl_.Visit([&](const auto& e) {
    using T = std::decay_t<decltype(e)>;
    if (T* b = std::get_if<T>(backup)) {
      *b = e;  // same kind: assigned in place, no allocation for equal sizes
    } else {
      backup->template emplace<T>(e);
    }
  });
}

void EstimatorSlot::RestoreFrom(const Backup& backup) {
  impl_.Visit([&](auto& e) {
    using T = std::decay_t<decltype(e)>;
    e = std::get<T>(backup);
  });
}

void EstimatorSlot::Pack(std::vector<double>* out) const {
  est::StateWriter w(out);
  impl_.Visit([&](const auto& slot) { Unwrap(slot).state().Pack(w); });
}

Status EstimatorSlot::Unpack(std::span<const double> values) {
  // Works on a copy so that a state that passes Unpack but not Restore leaves *this untouched
  // (Restore already promises that; the copy keeps the promise independent of each family).
  return impl_.Visit([&](auto& slot) {
    auto copy = slot;
    Status s = UnpackInto(Unwrap(copy), values);
    if (s.ok()) slot = std::move(copy);
    return s;
  });
}

}  // namespace bayline::pipeline
