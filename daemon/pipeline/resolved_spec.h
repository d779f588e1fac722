// ResolvedSpec: what a rule's ChannelSpec means for one channel shape (model after "auto"
// resolution, number of regressors on the wire): the estimators with their options, the parameter
// names, the bound detectors, the publish policy and a digest. Immutable and shared by every
// channel of that rule and shape.
//
// Models and the estimators they allow (default: all of them, in this order):
//   linear              ls (Rls), ml (LinearMl), map (NigRegression, or DynamicLinearModel when
//                       map_tracker = "random_walk")
//   gaussian            ls (intercept-only recursive least squares: mean and residual variance),
//                       ml (GaussianMl), map (NormalGamma)
//   lognormal           ml
//   poisson             ml, map (gamma-poisson)
//   binomial            ml, map (beta-binomial)
//   exponential         ml, map (gamma-exponential)
//   gamma, logistic, poisson_regression   ml
// Parameter names: regression models "intercept" (when on) then spec.regressors (default x1, x2,
// ...); gaussian mean, variance; lognormal meanlog, sdlog; poisson and exponential rate; binomial
// probability; gamma shape, rate.
//
// Option mapping from ChannelSpec: forgetting -> every estimator (ls forgetting, ml forgetting, map
// discount); robust / extended_precision -> ls; prior -> map (linear: mean, scale = prior sd of
// each coefficient in units of sigma, shape / rate of the variance; gaussian: mean[0], scale,
// shape, rate; binomial alpha, beta; poisson / exponential shape, rate of the gamma prior).
// random_walk: drift_variance per observation for every coefficient, and prior.scale is the
// observation noise sd (default 1), which that tracker takes as known.
#pragma once

#include <array>
#include <cstdint>
#include <memory>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "bayline/v1/config.pb.h"
#include "daemon/pipeline/detector_setup.h"
#include "estimators/core/status.h"
#include "estimators/ls/rls_options.h"
#include "estimators/map/beta_binomial.h"
#include "estimators/map/dynamic_linear_model.h"
#include "estimators/map/gamma_exponential.h"
#include "estimators/map/gamma_poisson.h"
#include "estimators/map/nig_regression.h"
#include "estimators/map/normal_gamma.h"
#include "estimators/ml/glm_ml.h"
#include "estimators/ml/ml_common.h"

namespace bayline::pipeline {

enum class Model : uint8_t {
  kLinear,
  kGaussian,
  kLognormal,
  kPoisson,
  kBinomial,
  kExponential,
  kGamma,
  kLogistic,
  kPoissonRegression
};
enum class EstimatorKind : uint8_t { kLs, kMl, kMap };

inline constexpr std::size_t kMaxEstimatorsPerChannel = 3;

bool ParseModel(std::string_view name, Model* model);  // not "auto"
std::string_view ModelName(Model model);
bool IsRegressionModel(Model model);  // linear, logistic, poisson_regression
bool ParseEstimatorKind(std::string_view name, EstimatorKind* kind);
std::string_view EstimatorKindName(EstimatorKind kind);
// The estimators `model` allows, in default order.
std::span<const EstimatorKind> AllowedEstimators(Model model);
// Parameter names of a non-regression model.
std::span<const std::string_view> ScalarParameterNames(Model model);

struct ResolvedSpec {
  std::string rule_name;
  Model model = Model::kGaussian;
  uint32_t regressor_count = 0;  // x entries per observation on the wire
  bool intercept = false;        // regression models: a column of ones leads the row
  int p = 1;                     // coefficients (regression) / the ls row length (gaussian: 1)
  std::vector<std::string> parameter_names;
  std::vector<EstimatorKind> estimators;
  double level = 0.95;

  est::RlsOptions rls;
  est::MlOptions ml;
  est::GlmMlOptions glm;
  est::NormalGamma::Options normal_gamma;
  est::NigRegression<>::Options nig;
  bool random_walk = false;
  est::DynamicLinearModel<>::Options dlm;
  est::BetaBinomial::Options beta_binomial;
  est::GammaPoisson::Options gamma_poisson;
  est::GammaExponential::Options gamma_exponential;

  std::vector<DetectorSetup> detectors;  // bound: watch index, band parameter index
  // Per estimator: whether some detector reads its one-step innovation (computing one costs
  // special functions, e.g. a Student-t normal score, so it is only asked for when read).
  std::array<bool, kMaxEstimatorsPerChannel> needs_innovation{};

  uint32_t every_n = 1;
  int64_t min_interval_ns = 0;

  std::string digest;  // 16 hex digits over the rule's spec and the shape
};

// The model a rule gives a channel whose first observation has `regressor_count` regressors
// ("auto": gaussian without, linear with).
Model ResolveModel(const bayline::v1::ChannelSpec& spec, uint32_t regressor_count);

// Resolves `rule` (already validated, detectors already calibrated into `detectors` in spec order)
// for a channel of `model` with `regressor_count` regressors. Errors (kWrongRegressorCount naming
// the rule field) when the shape contradicts the spec, e.g. a prior mean of the wrong length.
est::Status ResolveSpec(const bayline::v1::Rule& rule, const std::string& rule_name,
                        const std::vector<DetectorSetup>& detectors, Model model,
                        uint32_t regressor_count, std::shared_ptr<const ResolvedSpec>* out);

// FNV-1a 64 over bytes, as 16 hex digits.
std::string HexDigest(std::string_view bytes);

}  // namespace bayline::pipeline
