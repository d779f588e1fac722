// RuleSet: the rules of a configuration, compiled: names, calibrated detectors, and a cache of
// resolved specs per (rule, channel shape) so that every channel of a rule and shape shares one
// immutable ResolvedSpec.
#pragma once

#include <cstdint>
#include <map>
#include <memory>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "bayline/v1/config.pb.h"
#include "daemon/pipeline/detector_setup.h"
#include "daemon/pipeline/resolved_spec.h"
#include "estimators/core/status.h"

namespace bayline::pipeline {

class RuleSet {
 public:
  // Compiles (and calibrates) every rule. A rule whose calibration fails is kept, but resolving it
  // fails with that status; Build returns the first such failure (Reconfigure refuses on it, the
  // constructor of Pipeline keeps the working rules).
  // `fleet`: the daemon's budget counters (fleet_budget.h) that budgeted detectors count their
  // channels in; nullptr: counters of this rule set's own.
  est::Status Build(const bayline::v1::DaemonConfig& config, FleetPools* fleet = nullptr);

  // Index of the first rule matching `name`, or -1.
  int Match(std::string_view name) const;
  const std::string& RuleName(int rule) const {
    return rules_[static_cast<std::size_t>(rule)].name;
  }

  // The spec of `rule` for a channel of `model` with `regressor_count` wire regressors (cached).
  est::Status Resolve(int rule, Model model, uint32_t regressor_count,
                      std::shared_ptr<const ResolvedSpec>* out);
  // As Resolve, choosing the model from the rule ("auto" by the regressor count).
  est::Status ResolveForObservation(int rule, uint32_t regressor_count,
                                    std::shared_ptr<const ResolvedSpec>* out);

 private:
  struct CompiledRule {
    bayline::v1::Rule rule;
    std::string name;
    std::vector<DetectorSetup> detectors;
    est::Status calibration;
  };
  std::vector<CompiledRule> rules_;
  std::map<std::pair<int, std::pair<Model, uint32_t>>, std::shared_ptr<const ResolvedSpec>> cache_;
};

// The rules in effect for a config: its own, or the default rule when it has none.
const google::protobuf::RepeatedPtrField<bayline::v1::Rule>& EffectiveRules(
    const bayline::v1::DaemonConfig& config);
// "rules[i]" when the rule has no name.
std::string RuleDisplayName(const bayline::v1::Rule& rule, int index);

}  // namespace bayline::pipeline
