#include "daemon/pipeline/resolved_spec.h"

#include <google/protobuf/io/coded_stream.h>
#include <google/protobuf/io/zero_copy_stream_impl_lite.h>

#include <array>
#include <cstdio>
#include <utility>

#include "daemon/pipeline/channel_name.h"
#include "daemon/pipeline/detector_slot.h"

namespace bayline::pipeline {
namespace {

constexpr std::array<std::pair<std::string_view, Model>, 9> kModels{{
    {"linear", Model::kLinear},
    {"gaussian", Model::kGaussian},
    {"lognormal", Model::kLognormal},
    {"poisson", Model::kPoisson},
    {"binomial", Model::kBinomial},
    {"exponential", Model::kExponential},
    {"gamma", Model::kGamma},
    {"logistic", Model::kLogistic},
    {"poisson_regression", Model::kPoissonRegression},
}};

constexpr EstimatorKind kAll[] = {EstimatorKind::kLs, EstimatorKind::kMl, EstimatorKind::kMap};
constexpr EstimatorKind kMlMap[] = {EstimatorKind::kMl, EstimatorKind::kMap};
constexpr EstimatorKind kMlOnly[] = {EstimatorKind::kMl};

constexpr std::string_view kGaussianNames[] = {"mean", "variance"};
constexpr std::string_view kLognormalNames[] = {"meanlog", "sdlog"};
constexpr std::string_view kRateNames[] = {"rate"};
constexpr std::string_view kProbabilityNames[] = {"probability"};
constexpr std::string_view kGammaNames[] = {"shape", "rate"};

// Deterministic bytes of a message (no maps are involved, but say so explicitly).
std::string DeterministicBytes(const google::protobuf::MessageLite& m) {
  std::string out;
  {
    google::protobuf::io::StringOutputStream stream(&out);
    google::protobuf::io::CodedOutputStream coded(&stream);
    coded.SetSerializationDeterministic(true);
    m.SerializeToCodedStream(&coded);
  }
  return out;
}

}  // namespace

bool ParseModel(std::string_view name, Model* model) {
  for (const auto& [n, m] : kModels) {
    if (n == name) {
      *model = m;
      return true;
    }
  }
  return false;
}

std::string_view ModelName(Model model) {
  for (const auto& [n, m] : kModels) {
    if (m == model) return n;
  }
  return "unknown";
}

bool IsRegressionModel(Model model) {
  return model == Model::kLinear || model == Model::kLogistic || model == Model::kPoissonRegression;
}

bool ParseEstimatorKind(std::string_view name, EstimatorKind* kind) {
  if (name == "ls")
    *kind = EstimatorKind::kLs;
  else if (name == "ml")
    *kind = EstimatorKind::kMl;
  else if (name == "map")
    *kind = EstimatorKind::kMap;
  else
    return false;
  return true;
}

std::string_view EstimatorKindName(EstimatorKind kind) {
  switch (kind) {
    case EstimatorKind::kLs:
      return "ls";
    case EstimatorKind::kMl:
      return "ml";
    case EstimatorKind::kMap:
      return "map";
  }
  return "unknown";
}

std::span<const EstimatorKind> AllowedEstimators(Model model) {
  switch (model) {
    case Model::kLinear:
    case Model::kGaussian:
      return kAll;
    case Model::kPoisson:
    case Model::kBinomial:
    case Model::kExponential:
      return kMlMap;
    case Model::kLognormal:
    case Model::kGamma:
    case Model::kLogistic:
    case Model::kPoissonRegression:
      return kMlOnly;
  }
  return {};
}

std::span<const std::string_view> ScalarParameterNames(Model model) {
  switch (model) {
    case Model::kGaussian:
      return kGaussianNames;
    case Model::kLognormal:
      return kLognormalNames;
    case Model::kPoisson:
    case Model::kExponential:
      return kRateNames;
    case Model::kBinomial:
      return kProbabilityNames;
    case Model::kGamma:
      return kGammaNames;
    default:
      return {};
  }
}

std::string HexDigest(std::string_view bytes) {
  char buf[17];
  std::snprintf(buf, sizeof buf, "%016llx", static_cast<unsigned long long>(ChannelHash(bytes)));
  return buf;
}

Model ResolveModel(const bayline::v1::ChannelSpec& spec, uint32_t regressor_count) {
  Model m;
  if (ParseModel(spec.model(), &m)) return m;
  return regressor_count == 0 ? Model::kGaussian : Model::kLinear;  // "auto" or empty
}

est::Status ResolveSpec(const bayline::v1::Rule& rule, const std::string& rule_name,
                        const std::vector<DetectorSetup>& detectors, Model model,
                        uint32_t regressor_count, std::shared_ptr<const ResolvedSpec>* out) {
  const auto& spec = rule.spec();
  auto r = std::make_shared<ResolvedSpec>();
  r->rule_name = rule_name;
  r->model = model;
  const bool regression = IsRegressionModel(model);
  r->regressor_count = regression ? regressor_count : 0;
  r->intercept = regression && (!spec.has_intercept() || spec.intercept());
  r->p = regression ? static_cast<int>(r->regressor_count) + (r->intercept ? 1 : 0) : 1;
  if (regression && r->p == 0) {
    return est::Status::Error(
        est::ErrorCode::kWrongRegressorCount,
        "rule \"" + rule_name + "\": a regression model without intercept needs regressors");
  }
  if (regression && spec.regressors_size() > 0 &&
      static_cast<uint32_t>(spec.regressors_size()) != regressor_count) {
    return est::Status::Error(
        est::ErrorCode::kWrongRegressorCount,
        "rule \"" + rule_name + "\" names " + std::to_string(spec.regressors_size()) +
            " regressors, the observation has " + std::to_string(regressor_count));
  }
  if (regression) {
    if (r->intercept) r->parameter_names.emplace_back("intercept");
    for (uint32_t j = 0; j < r->regressor_count; ++j) {
      if (spec.regressors_size() > 0) {
        r->parameter_names.push_back(spec.regressors(static_cast<int>(j)));
      } else {
        std::string name(1, 'x');  // x1, x2, ... (appended: GCC 12 warns falsely on "x" + ...)
        name.append(std::to_string(j + 1));
        r->parameter_names.push_back(std::move(name));
      }
    }
  } else {
    for (std::string_view n : ScalarParameterNames(model)) r->parameter_names.emplace_back(n);
  }
  if (spec.estimators_size() == 0) {
    for (EstimatorKind k : AllowedEstimators(model)) r->estimators.push_back(k);
  } else {
    for (const auto& name : spec.estimators()) {
      EstimatorKind k;
      ParseEstimatorKind(name, &k);  // validated
      r->estimators.push_back(k);
    }
  }
  r->level = spec.level() > 0 ? spec.level() : 0.95;

  est::ForgettingOptions forgetting;
  if (spec.forgetting().half_life_s() > 0)
    forgetting.half_life = spec.forgetting().half_life_s();
  else if (spec.forgetting().lambda() > 0)
    forgetting.lambda = spec.forgetting().lambda();
  r->rls.forgetting = forgetting;
  r->rls.robust = spec.robust();
  r->rls.extended_precision = spec.extended_precision();
  r->ml.forgetting = forgetting;
  r->glm.num_regressors = static_cast<std::size_t>(r->p);
  r->glm.forgetting = forgetting;

  const auto& prior = spec.prior();
  const double scale = prior.scale() > 0 ? prior.scale() : 0.0;
  if (model == Model::kLinear) {
    r->random_walk = spec.map_tracker() == "random_walk";
    auto& nig = r->nig;
    nig.p = r->p;
    nig.flat_prior = prior.flat();
    nig.discount = forgetting;
    if (prior.mean_size() > 0) {
      if (prior.mean_size() != r->p) {
        return est::Status::Error(
            est::ErrorCode::kWrongRegressorCount,
            "rule \"" + rule_name + "\": prior.mean has " + std::to_string(prior.mean_size()) +
                " entries, the channel has " + std::to_string(r->p) + " coefficients");
      }
      nig.prior_mean.assign(prior.mean().begin(), prior.mean().end());
    }
    if (scale > 0)
      nig.prior_precision.assign(static_cast<std::size_t>(r->p), 1.0 / (scale * scale));
    if (prior.shape() > 0) nig.a0 = prior.shape();
    if (prior.rate() > 0) nig.b0 = prior.rate();
    auto& dlm = r->dlm;
    dlm.p = r->p;
    dlm.obs_variance = scale > 0 ? scale * scale : 1.0;
    dlm.state_variance.assign(static_cast<std::size_t>(r->p), spec.drift_variance());
  } else if (model == Model::kGaussian) {
    auto& ng = r->normal_gamma;
    ng.flat_prior = prior.flat();
    ng.discount = forgetting;
    if (prior.mean_size() > 0) ng.m0 = prior.mean(0);
    if (scale > 0) ng.kappa0 = 1.0 / (scale * scale);
    if (prior.shape() > 0) ng.a0 = prior.shape();
    if (prior.rate() > 0) ng.b0 = prior.rate();
  }
  r->beta_binomial.discount = forgetting;
  if (prior.alpha() > 0) r->beta_binomial.alpha0 = prior.alpha();
  if (prior.beta() > 0) r->beta_binomial.beta0 = prior.beta();
  r->gamma_poisson.discount = forgetting;
  r->gamma_exponential.discount = forgetting;
  if (prior.shape() > 0) r->gamma_poisson.a0 = r->gamma_exponential.a0 = prior.shape();
  if (prior.rate() > 0) r->gamma_poisson.b0 = r->gamma_exponential.b0 = prior.rate();

  for (std::size_t i = 0; i < detectors.size(); ++i) {
    DetectorSetup d = detectors[i];
    d.watch = 0;
    if (!d.watch_name.empty()) {
      EstimatorKind k;
      ParseEstimatorKind(d.watch_name, &k);
      for (std::size_t e = 0; e < r->estimators.size(); ++e) {
        if (r->estimators[e] == k) d.watch = static_cast<int>(e);
      }
    }
    if (d.kind == DetectorKind::kBand) {
      d.band.parameter = -1;
      for (std::size_t j = 0; j < r->parameter_names.size(); ++j) {
        if (r->parameter_names[j] == d.band_parameter) d.band.parameter = static_cast<int>(j);
      }
      if (d.band.parameter < 0) {
        return est::Status::Error(est::ErrorCode::kOutOfDomain,
                                  "rule \"" + rule_name + "\": band parameter \"" +
                                      d.band_parameter + "\" is not a parameter of this channel");
      }
    }
    // bocpd reads the same N(0, 1) score as the charts on every family (detector_slot.h).
    if (d.phase2) {
      est::ExactScoreOptions known;
      if (DetectorSlot::ExactScoreFamily(model, &known.family) &&
          known.family != est::ScoreFamily::kLogistic &&
          known.family != est::ScoreFamily::kPoissonRegression) {
        known.known = true;
        known.mean = d.target_mean;
        known.sd = d.target_sd;
        if (est::Status v = known.Validate(); !v.ok()) {
          return est::Status::Error(est::ErrorCode::kOutOfDomain,
                                    "rule \"" + rule_name + "\": phase2 on a " +
                                        std::string(ModelName(model)) + " channel: " + v.message());
        }
      }
    }
    // Which detectors read the watched estimator's innovation (see detector_slot.h).
    const EstimatorKind watched = r->estimators[static_cast<std::size_t>(d.watch)];
    if (DetectorSlot::ReadsInnovation(d, model, watched))
      r->needs_innovation[static_cast<std::size_t>(d.watch)] = true;
    r->detectors.push_back(std::move(d));
  }

  r->every_n = spec.publish().every_n() > 0 ? spec.publish().every_n() : 1;
  r->min_interval_ns = static_cast<int64_t>(spec.publish().min_interval_ms()) * 1000000;

  std::string bytes = DeterministicBytes(spec);
  bytes += '|';
  bytes += ModelName(model);
  bytes += '|';
  bytes += std::to_string(r->regressor_count);
  r->digest = HexDigest(bytes);
  *out = std::move(r);
  return est::Status::Ok();
}

}  // namespace bayline::pipeline
