#include "daemon/pipeline/estimator_slot.h"

#include <cmath>
#include <map>
#include <string>
#include <utility>
#include <type_traits>

#include "daemon/pipeline/packing.h"

#include "estimators/core/distributions.h"

namespace bayline::pipeline {
namespace {

using est::ErrorCode;
using est::Status;

constexpr double kOne[] = {1.0};

bool IsWhole(double v) { return std::isfinite(v) && std::floor(v) == v; }

// The one place that maps (model, kind) to the estimator type: calls make(std::type_identity<T>,
// factory) where factory() returns the fresh estimator (called only when it is constructed).
template <typename Make>
decltype(auto) WithEstimatorType(const ResolvedSpec& s, EstimatorKind kind, Make&& make) {
  using est::Rls;
  using GaussianLs = EstimatorSlot::GaussianLs;
  auto of = [&](auto type, auto factory) -> decltype(auto) { return make(type, factory); };
  using std::type_identity;
  switch (s.model) {
    case Model::kGaussian:
      if (kind == EstimatorKind::kLs) {
        return of(type_identity<GaussianLs>{}, [&] { return GaussianLs(s.rls, 1); });
      }
      if (kind == EstimatorKind::kMl) {
        return of(type_identity<est::GaussianMl>{}, [&] { return est::GaussianMl(s.ml); });
      }
      return of(type_identity<est::NormalGamma>{}, [&] { return est::NormalGamma(s.normal_gamma); });
    case Model::kLinear:
      if (kind == EstimatorKind::kLs) {
        return of(type_identity<Boxed<Rls>>{}, [&] { return Boxed<Rls>(Rls(s.rls, s.p)); });
      }
      if (kind == EstimatorKind::kMl) {
        return of(type_identity<Boxed<est::LinearMl>>{}, [&] {
          est::RlsOptions o = s.rls;
          o.robust = false;  // ml is the gaussian likelihood, not a Huber M-estimate
          return Boxed<est::LinearMl>(est::LinearMl(o, s.p));
        });
      }
      if (s.random_walk) {
        return of(type_identity<Boxed<est::DynamicLinearModel<>>>{}, [&] {
          return Boxed<est::DynamicLinearModel<>>(est::DynamicLinearModel<>(s.dlm));
        });
      }
      return of(type_identity<Boxed<est::NigRegression<>>>{},
                [&] { return Boxed<est::NigRegression<>>(est::NigRegression<>(s.nig)); });
    case Model::kLognormal:
      return of(type_identity<est::LognormalMl>{}, [&] { return est::LognormalMl(s.ml); });
    case Model::kPoisson:
      if (kind == EstimatorKind::kMl) {
        return of(type_identity<est::PoissonMl>{}, [&] { return est::PoissonMl(s.ml); });
      }
      return of(type_identity<est::GammaPoisson>{},
                [&] { return est::GammaPoisson(s.gamma_poisson); });
    case Model::kBinomial:
      if (kind == EstimatorKind::kMl) {
        return of(type_identity<est::BinomialMl>{}, [&] { return est::BinomialMl(s.ml); });
      }
      return of(type_identity<est::BetaBinomial>{},
                [&] { return est::BetaBinomial(s.beta_binomial); });
    case Model::kExponential:
      if (kind == EstimatorKind::kMl) {
        return of(type_identity<est::ExponentialMl>{}, [&] { return est::ExponentialMl(s.ml); });
      }
      return of(type_identity<est::GammaExponential>{},
                [&] { return est::GammaExponential(s.gamma_exponential); });
    case Model::kGamma:
      return of(type_identity<est::GammaMl>{}, [&] { return est::GammaMl(s.ml); });
    case Model::kLogistic:
      return of(type_identity<Boxed<est::LogisticRegressionMl>>{}, [&] {
        return Boxed<est::LogisticRegressionMl>(est::LogisticRegressionMl(s.glm));
      });
    case Model::kPoissonRegression:
      return of(type_identity<Boxed<est::PoissonRegressionMl>>{}, [&] {
        return Boxed<est::PoissonRegressionMl>(est::PoissonRegressionMl(s.glm));
      });
  }
  return of(type_identity<est::GaussianMl>{}, [&] { return est::GaussianMl(s.ml); });
}

// Chi-square quantiles for the residual-variance interval, cached per thread by (dof, level):
// channels of a fleet publish at the same dof values (n - 1 at every every_n-th observation), and
// an inverse incomplete gamma costs about 13 us. The cache returns exactly what the function would.
std::pair<double, double> ChiSquaredInterval(double dof, double level) {
  thread_local std::map<std::pair<double, double>, std::pair<double, double>> cache;
  const auto key = std::make_pair(dof, level);
  if (auto it = cache.find(key); it != cache.end()) return it->second;
  const double q = (1.0 - level) / 2.0;
  const std::pair<double, double> value{est::dist::ChiSquaredQuantile(1.0 - q, dof),
                                        est::dist::ChiSquaredQuantile(q, dof)};
  if (cache.size() >= 4096) cache.clear();  // bounded
  cache.emplace(key, value);
  return value;
}

// Residual-variance row of the gaussian ls report: s^2 with a chi-square interval on dof.
void AppendResidualVariance(const EstimatorSlot::GaussianLs& ls, double level,
                            est::ParameterReport* r) {
  const double dof = ls.dof();
  const double s2 = ls.residual_variance();
  double se = est::kNaN, lo = est::kNaN, hi = est::kNaN;
  if (r->identifiable && dof > 0 && std::isfinite(s2)) {
    se = s2 * std::sqrt(2.0 / dof);
    if (level > 0 && level < 1) {
      const auto [upper_quantile, lower_quantile] = ChiSquaredInterval(dof, level);
      lo = dof * s2 / upper_quantile;
      hi = dof * s2 / lower_quantile;
    }
  }
  r->value.push_back(r->identifiable ? s2 : est::kNaN);
  r->std_error.push_back(se);
  r->lower.push_back(lo);
  r->upper.push_back(hi);
}

}  // namespace

Status CheckObservation(const ResolvedSpec& spec, const est::Sample& s) {
  const std::size_t expected = IsRegressionModel(spec.model) ? static_cast<std::size_t>(spec.p) : 0;
  if (s.x.size() != expected) {
    const std::size_t wire = s.x.size() - (spec.intercept && !s.x.empty() ? 1 : 0);
    return Status::Error(ErrorCode::kWrongRegressorCount,
                         "x has " + std::to_string(wire) + " entries, channel expects " +
                             std::to_string(spec.regressor_count));
  }
  Status st = est::CheckCommonFields(s, expected);
  if (!st.ok()) return st;
  switch (spec.model) {
    case Model::kLognormal:
    case Model::kExponential:
    case Model::kGamma:
      if (!(s.y > 0)) {
        return Status::Error(ErrorCode::kOutOfDomain,
                             "y must be > 0 for model " + std::string(ModelName(spec.model)) +
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
        return Status::Error(ErrorCode::kOutOfDomain,
                             "y must be a whole number of successes in [0, trials], got " +
                                 std::to_string(s.y));
      }
      break;
    case Model::kLinear:
    case Model::kGaussian:
      break;
  }
  if (spec.bocpd_needs_unit_weight && s.weight != 1.0) {
    return Status::Error(ErrorCode::kInvalidWeight,
                         "weight must be 1 on a channel with a bocpd detector on counts, got " +
                             std::to_string(s.weight));
  }
  return Status::Ok();
}

bool EstimatorCanInflate(Model model, EstimatorKind kind) {
  if (kind == EstimatorKind::kLs) return model == Model::kLinear || model == Model::kGaussian;
  return kind == EstimatorKind::kMl && model == Model::kLinear;
}

std::size_t EstimatorSlot::StorageSize(const ResolvedSpec& spec, EstimatorKind kind) {
  return WithEstimatorType(spec, kind, [](auto type, auto&&) {
    return Impl::StorageSizeOf<typename decltype(type)::type>();
  });
}

EstimatorSlot* EstimatorSlot::Create(void* storage, const ResolvedSpec& spec, EstimatorKind kind) {
  return WithEstimatorType(spec, kind, [&](auto type, auto&& factory) {
    using T = typename decltype(type)::type;
    return ::new (storage) EstimatorSlot(std::in_place_type<T>, factory);
  });
}

Status EstimatorSlot::Update(const est::Sample& sample, est::Innovation* innovation,
                             est::RecursiveResidual* rr) {
  return impl_.Visit(
      [&](auto& slot) -> Status {
        using T = std::decay_t<decltype(slot)>;
        auto& e = Unwrap(slot);
        if constexpr (std::is_same_v<T, GaussianLs>) {
          est::Sample with_intercept = sample;
          with_intercept.x = kOne;
          return e.Update(with_intercept, innovation, rr);
        } else if constexpr (std::is_same_v<T, Boxed<est::Rls>>) {
          return e.Update(sample, innovation, rr);
        } else {
          return e.Update(sample, innovation);
        }
      });
}

est::ParameterReport EstimatorSlot::Report(double level) const {
  return impl_.Visit(
      [&](const auto& slot) {
        using T = std::decay_t<decltype(slot)>;
        est::ParameterReport r = Unwrap(slot).Report(level);
        if constexpr (std::is_same_v<T, GaussianLs>) AppendResidualVariance(slot, level, &r);
        return r;
      });
}

bool EstimatorSlot::CanPredict() const {
  return impl_.get_if<Boxed<est::Rls>>() != nullptr ||
         impl_.get_if<Boxed<est::LinearMl>>() != nullptr ||
         impl_.get_if<Boxed<est::NigRegression<>>>() != nullptr ||
         impl_.get_if<Boxed<est::DynamicLinearModel<>>>() != nullptr;
}

est::Prediction EstimatorSlot::Predict(std::span<const double> x, double level) const {
  est::Prediction out;
  out.level = level;
  if (const auto* rls = impl_.get_if<Boxed<est::Rls>>()) {
    if (!(*rls)->Predict(x, level, &out).ok()) out.valid = false;
  } else if (const auto* nig = impl_.get_if<Boxed<est::NigRegression<>>>()) {
    out = (*nig)->Predict(x, level);
  } else if (const auto* dlm = impl_.get_if<Boxed<est::DynamicLinearModel<>>>()) {
    out = (*dlm)->Predict(x, level);
  } else if (const auto* ml = impl_.get_if<Boxed<est::LinearMl>>()) {
    // Plug-in gaussian predictive (linear_ml.h): y ~ N(x'theta, sigma2_ml + x' Cov x).
    const double sigma2 = (*ml)->sigma2_ml();
    if (!(*ml)->rls().identifiable() || !std::isfinite(sigma2) ||
        x.size() != static_cast<std::size_t>((*ml)->rls().p()) || !(level > 0 && level < 1)) {
      return out;
    }
    const Eigen::Map<const Eigen::VectorXd> xv(x.data(), static_cast<Eigen::Index>(x.size()));
    const Eigen::VectorXd theta = (*ml)->coefficients();
    const double mean_var = xv.dot((*ml)->covariance() * xv);
    const double z = est::dist::NormalQuantile(0.5 + level / 2);
    out.mean = xv.dot(theta);
    out.mean_sd = std::sqrt(mean_var);
    out.sd = std::sqrt(mean_var + sigma2);
    out.lower = out.mean - z * out.sd;
    out.upper = out.mean + z * out.sd;
    out.valid = std::isfinite(out.mean) && std::isfinite(out.sd);
  }
  return out;
}

bool EstimatorSlot::CanInflate() const {
  return impl_.get_if<GaussianLs>() != nullptr ||
         impl_.get_if<Boxed<est::Rls>>() != nullptr ||
         impl_.get_if<Boxed<est::LinearMl>>() != nullptr;
}

Status EstimatorSlot::Inflate(double factor) {
  if (auto* ls = impl_.get_if<GaussianLs>()) return ls->InflateUncertainty(factor);
  if (auto* rls = impl_.get_if<Boxed<est::Rls>>()) return (*rls)->InflateUncertainty(factor);
  if (auto* ml = impl_.get_if<Boxed<est::LinearMl>>()) return (*ml)->InflateUncertainty(factor);
  return Status::Error(ErrorCode::kInvalidConfig, "this estimator cannot inflate its uncertainty");
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
