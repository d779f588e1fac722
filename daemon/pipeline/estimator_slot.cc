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

EstimatorSlot::Impl MakeImpl(const ResolvedSpec& s, EstimatorKind kind) {
  using Impl = EstimatorSlot::Impl;
  switch (s.model) {
    case Model::kGaussian:
      if (kind == EstimatorKind::kLs) return Impl(std::in_place_type<EstimatorSlot::GaussianLs>, s.rls, 1);
      if (kind == EstimatorKind::kMl) return Impl(std::in_place_type<est::GaussianMl>, s.ml);
      return Impl(std::in_place_type<est::NormalGamma>, s.normal_gamma);
    case Model::kLinear:
      if (kind == EstimatorKind::kLs) return Impl(Boxed<est::Rls>(est::Rls(s.rls, s.p)));
      if (kind == EstimatorKind::kMl) {
        est::RlsOptions o = s.rls;
        o.robust = false;  // ml is the gaussian likelihood, not a Huber M-estimate
        return Impl(Boxed<est::LinearMl>(est::LinearMl(o, s.p)));
      }
      if (s.random_walk) {
        return Impl(Boxed<est::DynamicLinearModel<>>(est::DynamicLinearModel<>(s.dlm)));
      }
      return Impl(Boxed<est::NigRegression<>>(est::NigRegression<>(s.nig)));
    case Model::kLognormal: return Impl(std::in_place_type<est::LognormalMl>, s.ml);
    case Model::kPoisson:
      if (kind == EstimatorKind::kMl) return Impl(std::in_place_type<est::PoissonMl>, s.ml);
      return Impl(std::in_place_type<est::GammaPoisson>, s.gamma_poisson);
    case Model::kBinomial:
      if (kind == EstimatorKind::kMl) return Impl(std::in_place_type<est::BinomialMl>, s.ml);
      return Impl(std::in_place_type<est::BetaBinomial>, s.beta_binomial);
    case Model::kExponential:
      if (kind == EstimatorKind::kMl) return Impl(std::in_place_type<est::ExponentialMl>, s.ml);
      return Impl(std::in_place_type<est::GammaExponential>, s.gamma_exponential);
    case Model::kGamma: return Impl(std::in_place_type<est::GammaMl>, s.ml);
    case Model::kLogistic:
      return Impl(Boxed<est::LogisticRegressionMl>(est::LogisticRegressionMl(s.glm)));
    case Model::kPoissonRegression:
      return Impl(Boxed<est::PoissonRegressionMl>(est::PoissonRegressionMl(s.glm)));
  }
  return Impl(std::in_place_type<est::GaussianMl>, s.ml);
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

EstimatorSlot::EstimatorSlot(const ResolvedSpec& spec, EstimatorKind kind)
    : impl_(MakeImpl(spec, kind)) {}

Status EstimatorSlot::Update(const est::Sample& sample, est::Innovation* innovation,
                             est::RecursiveResidual* rr) {
  return std::visit(
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
      },
      impl_);
}

est::ParameterReport EstimatorSlot::Report(double level) const {
  return std::visit(
      [&](const auto& slot) {
        using T = std::decay_t<decltype(slot)>;
        est::ParameterReport r = Unwrap(slot).Report(level);
        if constexpr (std::is_same_v<T, GaussianLs>) AppendResidualVariance(slot, level, &r);
        return r;
      },
      impl_);
}

bool EstimatorSlot::CanPredict() const {
  return std::holds_alternative<Boxed<est::Rls>>(impl_) ||
         std::holds_alternative<Boxed<est::LinearMl>>(impl_) ||
         std::holds_alternative<Boxed<est::NigRegression<>>>(impl_) ||
         std::holds_alternative<Boxed<est::DynamicLinearModel<>>>(impl_);
}

est::Prediction EstimatorSlot::Predict(std::span<const double> x, double level) const {
  est::Prediction out;
  out.level = level;
  if (const auto* rls = std::get_if<Boxed<est::Rls>>(&impl_)) {
    if (!(*rls)->Predict(x, level, &out).ok()) out.valid = false;
  } else if (const auto* nig = std::get_if<Boxed<est::NigRegression<>>>(&impl_)) {
    out = (*nig)->Predict(x, level);
  } else if (const auto* dlm = std::get_if<Boxed<est::DynamicLinearModel<>>>(&impl_)) {
    out = (*dlm)->Predict(x, level);
  } else if (const auto* ml = std::get_if<Boxed<est::LinearMl>>(&impl_)) {
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
  return std::holds_alternative<GaussianLs>(impl_) ||
         std::holds_alternative<Boxed<est::Rls>>(impl_) ||
         std::holds_alternative<Boxed<est::LinearMl>>(impl_);
}

Status EstimatorSlot::Inflate(double factor) {
  if (auto* ls = std::get_if<GaussianLs>(&impl_)) return ls->InflateUncertainty(factor);
  if (auto* rls = std::get_if<Boxed<est::Rls>>(&impl_)) return (*rls)->InflateUncertainty(factor);
  if (auto* ml = std::get_if<Boxed<est::LinearMl>>(&impl_)) return (*ml)->InflateUncertainty(factor);
  return Status::Error(ErrorCode::kInvalidConfig, "this estimator cannot inflate its uncertainty");
}

void EstimatorSlot::Pack(std::vector<double>* out) const {
  est::StateWriter w(out);
  std::visit([&](const auto& slot) { Unwrap(slot).state().Pack(w); }, impl_);
}

Status EstimatorSlot::Unpack(std::span<const double> values) {
  // Work on a copy so that a state that passes Unpack but not Restore leaves *this untouched
  // (Restore already promises that; the copy keeps the promise independent of each family).
  Impl copy = impl_;
  Status s = std::visit([&](auto& slot) { return UnpackInto(Unwrap(slot), values); }, copy);
  if (s.ok()) impl_ = std::move(copy);
  return s;
}

}  // namespace bayline::pipeline
