// ValidateConfig: every check that needs no data, each failure naming its field path.
#include <cmath>
#include <set>
#include <sstream>
#include <string>

#include "daemon/pipeline/daemon_config.h"
#include "daemon/pipeline/detector_setup.h"
#include "daemon/pipeline/detector_slot.h"
#include "daemon/pipeline/estimator_slot.h"
#include "daemon/pipeline/resolved_spec.h"
#include "daemon/pipeline/resource_limits.h"
#include "estimators/detect/calibration.h"

namespace bayline::pipeline {
namespace {

using bayline::v1::ChannelSpec;
using bayline::v1::DetectorSpec;
using est::Status;

std::string Num(double v) {
  std::ostringstream s;
  s << v;
  return s.str();
}

Status Bad(const std::string& path, const std::string& what) {
  return Status::Error(est::ErrorCode::kInvalidConfig, path + ": " + what);
}

bool Finite(double v) { return std::isfinite(v); }

// The models a spec can resolve to ("auto": gaussian or linear).
std::vector<Model> CandidateModels(const ChannelSpec& spec) {
  Model m;
  if (ParseModel(spec.model(), &m)) return {m};
  return {Model::kGaussian, Model::kLinear};
}

// The estimators a spec runs for `model`, or an error naming the field.
Status SpecEstimators(const ChannelSpec& spec, Model model, const std::string& path,
                      std::vector<EstimatorKind>* out) {
  out->clear();
  const auto allowed = AllowedEstimators(model);
  if (spec.estimators_size() == 0) {
    out->assign(allowed.begin(), allowed.end());
    return Status::Ok();
  }
  for (int i = 0; i < spec.estimators_size(); ++i) {
    const std::string p = path + ".estimators[" + std::to_string(i) + "]";
    EstimatorKind k;
    if (!ParseEstimatorKind(spec.estimators(i), &k)) {
      return Bad(p, "unknown estimator \"" + spec.estimators(i) + "\" (ls, ml or map)");
    }
    bool ok = false;
    for (EstimatorKind a : allowed) ok = ok || a == k;
    if (!ok) {
      std::string list;
      for (EstimatorKind a : allowed)
        list += (list.empty() ? "" : ", ") + std::string(EstimatorKindName(a));
      return Bad(p, "model " + std::string(ModelName(model)) + " does not allow \"" +
                        spec.estimators(i) + "\" (allowed: " + list + ")");
    }
    for (EstimatorKind e : *out) {
      if (e == k) return Bad(p, "estimator \"" + spec.estimators(i) + "\" listed twice");
    }
    out->push_back(k);
  }
  return Status::Ok();
}

Status ValidateDetector(const DetectorSpec& d, const std::vector<Model>& models,
                        const ChannelSpec& spec, const std::string& path) {
  DetectorKind kind;
  if (!ParseDetectorKind(d.kind(), &kind)) {
    return Bad(path + ".kind", "unknown detector \"" + d.kind() +
                                   "\" (cusum, ewma, page_hinkley, glr, bocpd, recursive_cusum, "
                                   "recursive_cusum_sq, band)");
  }
  est::Direction dir;
  if (!ParseDirection(d.direction(), &dir))
    return Bad(path + ".direction", "must be both, up or down");
  if (!(d.arl0() == 0 || (d.arl0() >= 2 && d.arl0() <= 1e7))) {
    return Bad(path + ".arl0", "must be in [2, 1e7], got " + Num(d.arl0()));
  }
  if (Status s = ValidateFleetBudget(d, path); !s.ok()) return s;  // fleet_budget.h
  if (!(d.shift() >= 0 && Finite(d.shift())))
    return Bad(path + ".shift", "must be finite and > 0, got " + Num(d.shift()));
  if (!d.mode().empty() && d.mode() != "self_starting" && d.mode() != "phase2") {
    return Bad(path + ".mode", "must be self_starting or phase2, got \"" + d.mode() + "\"");
  }
  if (d.mode() == "phase2") {
    if (!Finite(d.target_mean())) return Bad(path + ".target_mean", "must be finite");
    if (!(d.target_sd() > 0 && Finite(d.target_sd()))) {
      return Bad(path + ".target_sd",
                 "phase2 needs a finite target_sd > 0, got " + Num(d.target_sd()));
    }
    // On the families scored by their own law the target is that law's parameter (exact_scores.h).
    for (Model m : models) {
      est::ExactScoreOptions known;
      if (!DetectorSlot::ExactScoreFamily(m, &known.family) ||
          known.family == est::ScoreFamily::kLogistic ||
          known.family == est::ScoreFamily::kPoissonRegression)
        continue;
      known.known = true;
      known.mean = d.target_mean();
      known.sd = d.target_sd();
      if (Status v = known.Validate(); !v.ok())
        return Bad(path + ".target_mean", std::string(ModelName(m)) + ": " + v.message());
    }
  }
  const struct {
    const char* name;
    double v;
  } non_negative[] = {{"k", d.k()},         {"h", d.h()},
                      {"limit", d.limit()}, {"threshold", d.threshold()},
                      {"delta", d.delta()}, {"inflate_on_alarm", d.inflate_on_alarm()}};
  for (const auto& f : non_negative) {
    if (!(f.v >= 0 && Finite(f.v)))
      return Bad(path + "." + f.name, "must be finite and >= 0, got " + Num(f.v));
  }
  if (!(d.head_start() >= 0 && d.head_start() < 1)) {
    return Bad(path + ".head_start",
               "must be a fraction of h in [0, 1), got " + Num(d.head_start()));
  }
  if (!(d.lambda() >= 0 && d.lambda() <= 1))
    return Bad(path + ".lambda", "must be in (0, 1], got " + Num(d.lambda()));
  if (d.window() > 100000) return Bad(path + ".window", "must be <= 100000");
  if (!(d.hazard() >= 0 && d.hazard() < 1))
    return Bad(path + ".hazard", "must be in (0, 1), got " + Num(d.hazard()));
  if (kind == DetectorKind::kBocpd && d.threshold() > 1) {
    return Bad(path + ".threshold",
               "bocpd threshold is a probability in (0, 1], got " + Num(d.threshold()));
  }
  if (d.inflate_on_alarm() > 0 && d.inflate_on_alarm() < 1) {
    return Bad(path + ".inflate_on_alarm",
               "must be > 1 (or 0: off), got " + Num(d.inflate_on_alarm()));
  }
  const double arl0 = d.arl0() > 0 ? d.arl0() : est::kDefaultArl0;
  if ((kind == DetectorKind::kPageHinkley || kind == DetectorKind::kGlr ||
       kind == DetectorKind::kBocpd) &&
      d.threshold() == 0 && arl0 > kMaxSimulatedArl0) {
    return Bad(path + ".arl0", "simulated calibration is limited to arl0 <= " +
                                   Num(kMaxSimulatedArl0) + "; set threshold for a larger arl0");
  }
  if (kind == DetectorKind::kRecursiveCusum || kind == DetectorKind::kRecursiveCusumSquares) {
    const double a = d.significance();
    const bool ok = a == 0 || a == 0.01 || a == 0.05 || a == 0.10 ||
                    (kind == DetectorKind::kRecursiveCusumSquares && (a == 0.20 || a == 0.02));
    if (!ok) return Bad(path + ".significance", "unsupported significance " + Num(a));
    if (kind == DetectorKind::kRecursiveCusumSquares && d.window() > 0 && d.window() < 10) {
      return Bad(path + ".window", "recursive_cusum_sq needs a block of >= 10 residuals");
    }
    if (kind == DetectorKind::kRecursiveCusum && d.window() == 1) {
      return Bad(path + ".window", "recursive_cusum needs a block of >= 2 residuals");
    }
  }
  if (kind == DetectorKind::kBand) {
    if (d.parameter().empty()) return Bad(path + ".parameter", "band needs a parameter name");
    if (!(Finite(d.band_low()) && Finite(d.band_high()) && d.band_low() < d.band_high())) {
      return Bad(path + ".band_low", "band needs finite band_low < band_high");
    }
  }
  for (Model model : models) {
    std::vector<EstimatorKind> estimators;
    if (Status s = SpecEstimators(spec, model, path, &estimators); !s.ok())
      return Status::Ok();  // reported elsewhere
    EstimatorKind watched = estimators.front();
    if (!d.watch().empty()) {
      EstimatorKind k;
      bool found = false;
      if (ParseEstimatorKind(d.watch(), &k)) {
        for (EstimatorKind e : estimators) found = found || e == k;
      }
      if (!found) {
        return Bad(path + ".watch", "\"" + d.watch() +
                                        "\" is not an estimator of this channel (model " +
                                        std::string(ModelName(model)) + ")");
      }
      watched = k;
    }
    const bool needs_ls =
        kind == DetectorKind::kRecursiveCusum || kind == DetectorKind::kRecursiveCusumSquares;
    if (needs_ls && watched != EstimatorKind::kLs) {
      return Bad(path + ".watch", d.kind() + " watches the recursive residuals of ls");
    }
    if (d.inflate_on_alarm() > 1 && !EstimatorCanInflate(model, watched)) {
      return Bad(path + ".inflate_on_alarm",
                 "estimator " + std::string(EstimatorKindName(watched)) + " of model " +
                     std::string(ModelName(model)) + " cannot inflate its uncertainty (ls can)");
    }
    if (kind == DetectorKind::kBand && !IsRegressionModel(model)) {
      bool found = false;
      for (auto n : ScalarParameterNames(model)) found = found || n == d.parameter();
      if (!found)
        return Bad(path + ".parameter", "\"" + d.parameter() + "\" is not a parameter of model " +
                                            std::string(ModelName(model)));
    }
  }
  return Status::Ok();
}

Status ValidateSpec(const ChannelSpec& spec, const std::string& path, uint32_t max_regressors) {
  Model model;
  const bool is_auto = spec.model().empty() || spec.model() == "auto";
  if (!is_auto && !ParseModel(spec.model(), &model)) {
    return Bad(path + ".model", "unknown model \"" + spec.model() +
                                    "\" (auto, linear, gaussian, lognormal, poisson, binomial, "
                                    "exponential, gamma, logistic, poisson_regression)");
  }
  const std::vector<Model> models = CandidateModels(spec);
  const bool regression_possible = is_auto || IsRegressionModel(model);
  if (!regression_possible && spec.regressors_size() > 0) {
    return Bad(path + ".regressors", "model " + spec.model() + " takes no regressors");
  }
  if (!regression_possible && spec.has_intercept()) {
    return Bad(path + ".intercept", "model " + spec.model() + " has no intercept");
  }
  if (static_cast<uint32_t>(spec.regressors_size()) > max_regressors) {
    return Bad(path + ".regressors",
               "more than limits.max_regressors (" + std::to_string(max_regressors) + ")");
  }
  std::set<std::string> names;
  for (int i = 0; i < spec.regressors_size(); ++i) {
    const std::string p = path + ".regressors[" + std::to_string(i) + "]";
    if (spec.regressors(i).empty()) return Bad(p, "must not be empty");
    if (spec.regressors(i) == "intercept") return Bad(p, "\"intercept\" is reserved");
    if (!names.insert(spec.regressors(i)).second)
      return Bad(p, "\"" + spec.regressors(i) + "\" named twice");
  }
  for (Model m : models) {
    std::vector<EstimatorKind> estimators;
    if (Status s = SpecEstimators(spec, m, path, &estimators); !s.ok()) return s;
  }
  const auto& f = spec.forgetting();
  if (!(f.lambda() >= 0 && f.lambda() <= 1))
    return Bad(path + ".forgetting.lambda", "must be in (0, 1], got " + Num(f.lambda()));
  if (!(f.half_life_s() >= 0 && Finite(f.half_life_s()))) {
    return Bad(path + ".forgetting.half_life_s",
               "must be finite and >= 0, got " + Num(f.half_life_s()));
  }
  if (f.lambda() > 0 && f.lambda() < 1 && f.half_life_s() > 0) {
    return Bad(path + ".forgetting", "set lambda or half_life_s, not both");
  }
  if (!(spec.level() >= 0 && spec.level() < 1))
    return Bad(path + ".level", "must be in (0, 1), got " + Num(spec.level()));
  const auto& prior = spec.prior();
  const struct {
    const char* name;
    double v;
  } prior_fields[] = {{"scale", prior.scale()},
                      {"shape", prior.shape()},
                      {"rate", prior.rate()},
                      {"alpha", prior.alpha()},
                      {"beta", prior.beta()}};
  for (const auto& pf : prior_fields) {
    if (!(pf.v >= 0 && Finite(pf.v)))
      return Bad(path + ".prior." + pf.name, "must be finite and >= 0, got " + Num(pf.v));
  }
  for (int i = 0; i < prior.mean_size(); ++i) {
    if (!Finite(prior.mean(i)))
      return Bad(path + ".prior.mean[" + std::to_string(i) + "]", "must be finite");
  }
  if (!is_auto && model == Model::kGaussian && prior.mean_size() > 1) {
    return Bad(path + ".prior.mean", "gaussian takes one prior mean");
  }
  if (!is_auto && model == Model::kLinear && spec.regressors_size() > 0 && prior.mean_size() > 0) {
    const int p = spec.regressors_size() + ((!spec.has_intercept() || spec.intercept()) ? 1 : 0);
    if (prior.mean_size() != p) {
      return Bad(path + ".prior.mean", "has " + std::to_string(prior.mean_size()) +
                                           " entries, the model has " + std::to_string(p) +
                                           " coefficients");
    }
  }
  if (!spec.map_tracker().empty() && spec.map_tracker() != "conjugate" &&
      spec.map_tracker() != "random_walk") {
    return Bad(path + ".map_tracker",
               "must be conjugate or random_walk, got \"" + spec.map_tracker() + "\"");
  }
  if (spec.map_tracker() == "random_walk" && !is_auto && model != Model::kLinear) {
    return Bad(path + ".map_tracker", "random_walk applies to linear models only");
  }
  if (!(spec.drift_variance() >= 0 && Finite(spec.drift_variance()))) {
    return Bad(path + ".drift_variance",
               "must be finite and >= 0, got " + Num(spec.drift_variance()));
  }
  for (int i = 0; i < spec.detectors_size(); ++i) {
    const std::string p = path + ".detectors[" + std::to_string(i) + "]";
    if (Status s = ValidateDetector(spec.detectors(i), models, spec, p); !s.ok()) return s;
  }
  return Status::Ok();
}

}  // namespace

Status ValidateConfig(const bayline::v1::DaemonConfig& config) {
  if (!(config.snapshot_every_s() >= 0 && Finite(config.snapshot_every_s()))) {
    return Bad("snapshot_every_s",
               "must be finite and >= 0, got " + Num(config.snapshot_every_s()));
  }
  static const std::set<std::string> kLevels{"", "trace", "debug", "info", "warn", "error"};
  if (kLevels.count(config.log_level()) == 0) {
    return Bad("log_level",
               "must be trace, debug, info, warn or error, got \"" + config.log_level() + "\"");
  }
  if (!config.shard().empty()) {
    unsigned i = 0, n = 0;
    char extra = 0;
    if (std::sscanf(config.shard().c_str(), "%u/%u%c", &i, &n, &extra) != 2 || n == 0 || i >= n) {
      return Bad("shard", "must be \"i/N\" with 0 <= i < N, got \"" + config.shard() + "\"");
    }
  }
  const std::string& sync = config.journal().sync();
  if (!sync.empty() && sync != "off" && sync != "every_frame" && sync != "interval" &&
      sync != "size") {
    return Bad("journal.sync",
               "must be \"off\", \"every_frame\", \"interval\" or \"size\", got \"" + sync + "\"");
  }
  if (config.journal().interval_ms() > 3'600'000)
    return Bad("journal.interval_ms", "must be <= 3600000");
  if (!(config.false_alarms_per_day() >= 0 && Finite(config.false_alarms_per_day()))) {
    return Bad("false_alarms_per_day",
               "must be finite and > 0 (or 0: off), got " + Num(config.false_alarms_per_day()));
  }
  const auto& limits = config.limits();
  if (limits.max_channel_name_bytes() > 65536)
    return Bad("limits.max_channel_name_bytes", "must be <= 65536");
  if (limits.max_regressors() > 64) return Bad("limits.max_regressors", "must be <= 64");
  if (const std::string why = CheckResourceLimits(limits); !why.empty()) {
    return Status::Error(est::ErrorCode::kInvalidConfig, why);
  }
  const uint32_t max_regressors = limits.max_regressors() > 0 ? limits.max_regressors() : 32;
  const auto check_endpoint = [](const std::string& e, const std::string& path) {
    if (e.find("://") == std::string::npos)
      return Bad(path, "\"" + e + "\" is not an endpoint (tcp://host:port, ipc://path)");
    return Status::Ok();
  };
  const auto& ep = config.endpoints();
  for (int i = 0; i < ep.pull_bind_size(); ++i) {
    if (Status s =
            check_endpoint(ep.pull_bind(i), "endpoints.pull_bind[" + std::to_string(i) + "]");
        !s.ok())
      return s;
  }
  for (int i = 0; i < ep.sub_connect_size(); ++i) {
    if (Status s =
            check_endpoint(ep.sub_connect(i), "endpoints.sub_connect[" + std::to_string(i) + "]");
        !s.ok())
      return s;
  }
  if (!ep.publish_bind().empty()) {
    if (Status s = check_endpoint(ep.publish_bind(), "endpoints.publish_bind"); !s.ok()) return s;
  }
  if (!ep.control_bind().empty()) {
    if (Status s = check_endpoint(ep.control_bind(), "endpoints.control_bind"); !s.ok()) return s;
  }
  std::set<std::string> rule_names;
  for (int i = 0; i < config.rules_size(); ++i) {
    const auto& rule = config.rules(i);
    const std::string path = "rules[" + std::to_string(i) + "]";
    if (!rule.name().empty() && !rule_names.insert(rule.name()).second) {
      return Bad(path + ".name", "\"" + rule.name() + "\" is used by an earlier rule");
    }
    if (rule.match().empty())
      return Bad(path + ".match", "must not be empty (\"**\" matches everything)");
    if (rule.match().size() > 4096) return Bad(path + ".match", "is longer than 4096 bytes");
    if (Status s = ValidateSpec(rule.spec(), path + ".spec", max_regressors); !s.ok()) return s;
  }
  return Status::Ok();
}

}  // namespace bayline::pipeline
