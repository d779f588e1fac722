#include "daemon/pipeline/rule_set.h"

#include "daemon/pipeline/daemon_config.h"
#include "daemon/pipeline/glob.h"

namespace bayline::pipeline {

const google::protobuf::RepeatedPtrField<bayline::v1::Rule>& EffectiveRules(
    const bayline::v1::DaemonConfig& config) {
  if (config.rules_size() > 0) return config.rules();
  static const bayline::v1::DaemonConfig* const kDefault =
      new bayline::v1::DaemonConfig(DefaultConfig());
  return kDefault->rules();
}

std::string RuleDisplayName(const bayline::v1::Rule& rule, int index) {
  return rule.name().empty() ? "rules[" + std::to_string(index) + "]" : rule.name();
}

est::Status RuleSet::Build(const bayline::v1::DaemonConfig& config, FleetPools* fleet) {
  rules_.clear();
  cache_.clear();
  est::Status first_failure;
  const auto& rules = EffectiveRules(config);
  for (int i = 0; i < rules.size(); ++i) {
    CompiledRule c;
    c.rule = rules.Get(i);
    c.name = RuleDisplayName(c.rule, i);
    for (int d = 0; d < c.rule.spec().detectors_size() && c.calibration.ok(); ++d) {
      DetectorSetup setup;
      const std::string path =
          "rules[" + std::to_string(i) + "].spec.detectors[" + std::to_string(d) + "]";
      bool inherited = false;  // the daemon's false_alarms_per_day (fleet_budget.h)
      const auto spec = WithFleetDefault(config, c.rule.spec().detectors(d), &inherited);
      if (inherited) *c.rule.mutable_spec()->mutable_detectors(d) = spec;  // in the digest too
      c.calibration = CalibrateDetector(spec, path, &setup);
      if (c.calibration.ok() && setup.fleet != nullptr) {
        c.calibration = BindFleetBudget(*setup.fleet, fleet,
                                        FleetPoolKey(inherited, c.rule.match(), d), &setup.fleet);
      }
      if (c.calibration.ok()) c.detectors.push_back(std::move(setup));
    }
    if (!c.calibration.ok() && first_failure.ok()) first_failure = c.calibration;
    rules_.push_back(std::move(c));
  }
  return first_failure;
}

int RuleSet::Match(std::string_view name) const {
  for (std::size_t i = 0; i < rules_.size(); ++i) {
    if (GlobMatch(rules_[i].rule.match(), name)) return static_cast<int>(i);
  }
  return -1;
}

est::Status RuleSet::Resolve(int rule, Model model, uint32_t regressor_count,
                             std::shared_ptr<const ResolvedSpec>* out) {
  const CompiledRule& c = rules_[static_cast<std::size_t>(rule)];
  if (!c.calibration.ok()) return c.calibration;
  if (!IsRegressionModel(model)) regressor_count = 0;
  const auto key = std::make_pair(rule, std::make_pair(model, regressor_count));
  auto it = cache_.find(key);
  if (it != cache_.end()) {
    *out = it->second;
    return est::Status::Ok();
  }
  std::shared_ptr<const ResolvedSpec> spec;
  est::Status s = ResolveSpec(c.rule, c.name, c.detectors, model, regressor_count, &spec);
  if (!s.ok()) return s;
  cache_.emplace(key, spec);
  *out = std::move(spec);
  return est::Status::Ok();
}

est::Status RuleSet::ResolveForObservation(int rule, uint32_t regressor_count,
                                           std::shared_ptr<const ResolvedSpec>* out) {
  const Model model =
      ResolveModel(rules_[static_cast<std::size_t>(rule)].rule.spec(), regressor_count);
  return Resolve(rule, model, regressor_count, out);
}

}  // namespace bayline::pipeline
