// Control-API queries on the channel registry (List, Ask, Reset) and Reconfigure.
#include <algorithm>

#include "daemon/pipeline/daemon_config.h"
#include "daemon/pipeline/glob.h"
#include "daemon/pipeline/pipeline_state.h"

namespace bayline::pipeline {
namespace {

void FillInfo(const Channel& ch, bayline::v1::ChannelInfo* info) {
  info->set_name(std::string(ch.name()));
  info->set_model(std::string(ModelName(ch.spec->model)));
  info->set_rule(ch.spec->rule_name);
  info->set_accepted(ch.accepted);
  info->set_last_seq(ch.seq.last);
  info->set_last_time_ns(ch.last_time_ns);
  info->set_alarm_active(ch.alarm_active());
}

std::vector<const Channel*> SortedByName(const ChannelRegistry& channels) {
  std::vector<const Channel*> out;
  out.reserve(channels.size());
  channels.ForEach([&](const Channel& ch) { out.push_back(&ch); });
  std::sort(out.begin(), out.end(),
            [](const Channel* a, const Channel* b) { return a->name() < b->name(); });
  return out;
}

}  // namespace

bayline::v1::ChannelList PipelineState::List(std::string_view glob) const {
  bayline::v1::ChannelList list;
  for (const Channel* ch : SortedByName(channels_)) {
    if (glob.empty() || GlobMatch(glob, ch->name())) FillInfo(*ch, list.add_channels());
  }
  return list;
}

std::optional<bayline::v1::ChannelReport> PipelineState::Ask(std::string_view channel) const {
  const Channel* found = channels_.Find(channel);
  if (found == nullptr) return std::nullopt;
  const Channel& ch = *found;
  const ResolvedSpec& spec = *ch.spec;
  bayline::v1::ChannelReport report;
  FillInfo(ch, report.mutable_info());
  for (std::size_t i = 0; i < ch.estimator_count(); ++i) {
    FillEstimate(ch.name(), spec, spec.estimators[i], ch.estimator(i).Report(spec.level),
                 ch.seq.last, ch.last_time_ns, ch.accepted, report.add_estimates());
  }
  const std::span<const DetectorSlot> detectors = ch.detectors();
  for (std::size_t d = 0; d < detectors.size(); ++d) {
    const DetectorSetup& setup = spec.detectors[d];
    const DetectorSlot& slot = detectors[d];
    auto* ds = report.add_detectors();
    ds->set_detector(std::string(DetectorKindName(setup.kind)));
    ds->set_watched(
        std::string(EstimatorKindName(spec.estimators[static_cast<std::size_t>(setup.watch)])));
    ds->set_statistic(slot.last_statistic());
    ds->set_threshold(slot.last_threshold());
    ds->set_alarm_active(slot.alarm_active());
    ds->set_alarms_raised(slot.alarms_raised());
    if (slot.alarms_raised() > 0) {
      const LastAlarm& a = slot.last_alarm();
      auto* alarm = ds->mutable_last_alarm();
      alarm->set_channel(std::string(ch.name()));
      alarm->set_seq(a.seq);
      alarm->set_time_ns(a.time_ns);
      alarm->set_detector(ds->detector());
      alarm->set_watched(ds->watched());
      alarm->set_state("raised");
      alarm->set_statistic(a.statistic);
      alarm->set_threshold(a.threshold);
      alarm->set_direction(std::string(DirectionName(static_cast<est::Direction>(a.direction))));
      alarm->set_onset_seq(a.onset_seq);
      alarm->set_onset_time_ns(a.onset_time_ns);
      alarm->set_shift(a.shift);
      alarm->set_trigger_y(a.trigger_y);
    }
  }
  return report;
}

bool PipelineState::Reset(std::string_view channel) {
  const bool erased = channels_.Erase(channel);
  if (erased) budget_->Release();
  counters_.channels = channels_.size();
  return erased;
}

est::Status PipelineState::Reconfigure(const bayline::v1::DaemonConfig& config,
                                       std::vector<std::string>* reset) {
  if (est::Status s = ValidateConfig(config); !s.ok()) return s;
  RuleSet rules;
  if (est::Status s = rules.Build(config, &budget_->fleet()); !s.ok()) return s;

  // Decide for every channel before changing anything.
  std::vector<std::pair<Channel*, std::shared_ptr<const ResolvedSpec>>> keep;
  std::vector<std::string> drop;
  channels_.ForEach([&](Channel& ch) {
    const int rule = rules.Match(ch.name());
    std::shared_ptr<const ResolvedSpec> spec;
    bool same = false;
    if (rule >= 0) {
      const Model model =
          ResolveModel(EffectiveRules(config).Get(rule).spec(), ch.spec->regressor_count);
      same = rules.Resolve(rule, model, ch.spec->regressor_count, &spec).ok() &&
             spec->digest == ch.spec->digest;
    }
    if (same) {
      keep.emplace_back(&ch, std::move(spec));
    } else {
      drop.emplace_back(ch.name());
    }
  });

  config_ = config;
  limits_ = LimitsOf(config);
  budget_->set_limit(limits_.max_channels);
  rules_ = std::move(rules);
  for (auto& [ch, spec] : keep) ch->spec = std::move(spec);  // same content, new rule name
  std::sort(drop.begin(), drop.end());
  for (const auto& name : drop) {
    if (channels_.Erase(name)) budget_->Release();
  }
  counters_.channels = channels_.size();
  if (reset != nullptr) reset->insert(reset->end(), drop.begin(), drop.end());
  return est::Status::Ok();
}

}  // namespace bayline::pipeline
