// SaveChannels / AppendSerializedChannels / RestoreChannels: channel state <-> bayline.v1.Snapshot
// (snapshot.proto).
// Component order: the estimators in spec order, then the detectors in spec order; each is a kind
// name and the packed doubles of its state (EstimatorSlot::Pack, DetectorSlot::Pack).
// Restoring is per channel: a record that fails is set aside on its own (pipeline.h).
#include <algorithm>
#include <set>

#include "daemon/pipeline/channel_name.h"
#include "daemon/pipeline/daemon_config.h"
#include "daemon/pipeline/pipeline_state.h"

namespace bayline::pipeline {
namespace {

constexpr uint32_t kFormatVersion = 1;

est::Status Invalid(const std::string& channel, const std::string& why) {
  return est::Status::Error(est::ErrorCode::kInvalidState, "channel \"" + channel + "\": " + why);
}

// Fills `ch` (fresh from Channel::Create with `spec`) from its snapshot record: every component's
// kind and state, then the seq window, counters and publish state. An error names what is wrong;
// `ch` is then to be dropped.
est::Status RestoreChannel(const bayline::v1::ChannelSnapshot& c, const ResolvedSpec& spec,
                           Channel& ch) {
  const std::span<DetectorSlot> detectors = ch.detectors();
  const std::size_t expected = ch.estimator_count() + detectors.size();
  if (static_cast<std::size_t>(c.components_size()) != expected) {
    return est::Status::Error(est::ErrorCode::kInvalidState,
                              "has " + std::to_string(c.components_size()) +
                                  " components, spec has " + std::to_string(expected));
  }
  for (int k = 0; k < c.components_size(); ++k) {
    const auto& comp = c.components(k);
    const auto i = static_cast<std::size_t>(k);
    const std::span<const double> values(comp.values().data(), comp.values().size());
    std::string_view want;
    est::Status s;
    if (i < ch.estimator_count()) {
      want = EstimatorKindName(spec.estimators[i]);
      if (comp.kind() == want) s = ch.estimator(i).Unpack(values);
    } else {
      const std::size_t d = i - ch.estimator_count();
      want = DetectorKindName(spec.detectors[d].kind);
      if (comp.kind() == want) s = detectors[d].Unpack(values);
    }
    if (comp.kind() != want) {
      return est::Status::Error(est::ErrorCode::kInvalidState,
                                "component " + std::to_string(k) + " is \"" + comp.kind() +
                                    "\", expected \"" + std::string(want) + "\"");
    }
    if (!s.ok()) {
      return est::Status::Error(
          est::ErrorCode::kInvalidState,
          "component " + std::to_string(k) + " (" + comp.kind() + "): " + s.message());
    }
  }
  const uint64_t seen_window = c.seq().seen_window();
  if (seen_window != 0 && (seen_window & 1u) == 0) {
    return est::Status::Error(est::ErrorCode::kInvalidState, "seq window is inconsistent");
  }
  ch.seq.last = c.seq().last_seq();
  ch.seq.seen = seen_window;
  ch.accepted = c.counters().accepted();
  ch.last_time_ns = c.counters().last_time_ns();
  ch.publish.since_publish = c.publish().since_publish();
  ch.publish.last_publish_ns = c.publish().last_publish_time_ns();
  ch.publish.published = c.publish().published();
  return est::Status::Ok();
}

// Fills `c` (empty) with the record of `ch`; `values` is scratch space.
void SaveChannel(const Channel& ch, bayline::v1::ChannelSnapshot* c, std::vector<double>* values) {
  const ResolvedSpec& spec = *ch.spec;
  c->set_name(std::string(ch.name()));
  c->set_rule(spec.rule_name);
  c->set_spec_digest(spec.digest);
  c->set_model(std::string(ModelName(spec.model)));
  c->set_regressor_count(spec.regressor_count);
  c->mutable_seq()->set_last_seq(ch.seq.last);
  c->mutable_seq()->set_seen_window(ch.seq.seen);
  c->mutable_counters()->set_accepted(ch.accepted);
  c->mutable_counters()->set_last_time_ns(ch.last_time_ns);
  c->mutable_publish()->set_since_publish(ch.publish.since_publish);
  c->mutable_publish()->set_last_publish_time_ns(ch.publish.last_publish_ns);
  c->mutable_publish()->set_published(ch.publish.published);
  for (std::size_t i = 0; i < ch.estimator_count(); ++i) {
    values->clear();
    ch.estimator(i).Pack(values);
    auto* comp = c->add_components();
    comp->set_kind(std::string(EstimatorKindName(spec.estimators[i])));
    comp->mutable_values()->Assign(values->begin(), values->end());
  }
  const std::span<const DetectorSlot> detectors = ch.detectors();
  for (std::size_t d = 0; d < detectors.size(); ++d) {
    values->clear();
    detectors[d].Pack(values);
    auto* comp = c->add_components();
    comp->set_kind(std::string(DetectorKindName(spec.detectors[d].kind)));
    comp->mutable_values()->Assign(values->begin(), values->end());
  }
}

}  // namespace

std::vector<const Channel*> PipelineState::ChannelsByName() const {
  std::vector<const Channel*> sorted;
  sorted.reserve(channels_.size());
  channels_.ForEach([&](const Channel& ch) { sorted.push_back(&ch); });
  std::sort(sorted.begin(), sorted.end(),
            [](const Channel* a, const Channel* b) { return a->name() < b->name(); });
  return sorted;
}

void PipelineState::SaveChannels(bayline::v1::Snapshot* out) const {
  out->set_format_version(kFormatVersion);
  out->set_config_digest(ConfigDigest(config_));
  std::vector<double> values;
  for (const Channel* ch : ChannelsByName()) SaveChannel(*ch, out->add_channels(), &values);
}

uint64_t PipelineState::AppendSerializedChannels(std::string* out) const {
  bayline::v1::Snapshot header;
  header.set_format_version(kFormatVersion);
  header.set_config_digest(ConfigDigest(config_));
  header.AppendToString(out);
  // A Snapshot holding only channels[0] encodes as exactly that one repeated-field entry.
  bayline::v1::Snapshot one;
  bayline::v1::ChannelSnapshot* record = one.add_channels();
  std::vector<double> values;
  const std::vector<const Channel*> sorted = ChannelsByName();
  for (const Channel* ch : sorted) {
    record->Clear();
    SaveChannel(*ch, record, &values);
    one.AppendToString(out);
  }
  return sorted.size();
}

est::Status PipelineState::RestoreChannels(const bayline::v1::Snapshot& in,
                                           std::vector<std::string>* reset,
                                           std::vector<std::string>* not_restored) {
  if (in.channels_size() > 0 && in.format_version() != kFormatVersion) {
    return est::Status::Error(est::ErrorCode::kInvalidState,
                              "snapshot format_version " + std::to_string(in.format_version()) +
                                  " is not " + std::to_string(kFormatVersion));
  }
  std::vector<ChannelPtr> restored;
  std::vector<std::string> reset_names;
  std::vector<std::string> set_aside;
  std::set<std::string_view> seen;
  for (const auto& c : in.channels()) {
    const std::string& name = c.name();
    if (CheckChannelName(name, limits_.max_channel_name_bytes) != ChannelNameProblem::kOk) {
      set_aside.push_back("a channel with an invalid name (" + std::to_string(name.size()) +
                          " bytes)");
      continue;
    }
    if (!seen.insert(name).second) {
      set_aside.push_back(Invalid(name, "appears twice (the first is restored)").message());
      continue;
    }
    Model model;
    if (!ParseModel(c.model(), &model)) {
      set_aside.push_back(Invalid(name, "unknown model \"" + c.model() + "\"").message());
      continue;
    }
    const int rule = rules_.Match(name);
    std::shared_ptr<const ResolvedSpec> spec;
    if (rule < 0 || !rules_.Resolve(rule, model, c.regressor_count(), &spec).ok() ||
        spec->digest != c.spec_digest()) {
      reset_names.push_back(name);
      continue;
    }
    ChannelPtr fresh = Channel::Create(spec, name);
    const est::Status s = RestoreChannel(c, *spec, *fresh);
    if (!s.ok()) {
      set_aside.push_back(Invalid(name, s.message()).message());
      continue;
    }
    restored.push_back(std::move(fresh));
  }
  std::size_t added = 0;
  for (const ChannelPtr& ch : restored) added += channels_.Find(ch->name()) == nullptr ? 1 : 0;
  if (!budget_->TryReserve(added)) {  // shared with the other workers' pipelines
    return est::Status::Error(
        est::ErrorCode::kInvalidState,
        "restoring would exceed limits.max_channels (" + std::to_string(budget_->limit()) + ")");
  }
  for (ChannelPtr& ch : restored) channels_.InsertOrReplace(std::move(ch));
  counters_.channels = channels_.size();
  counters_.channels_not_restored += set_aside.size();
  if (reset != nullptr) reset->insert(reset->end(), reset_names.begin(), reset_names.end());
  if (not_restored != nullptr)
    not_restored->insert(not_restored->end(), set_aside.begin(), set_aside.end());
  return est::Status::Ok();
}

}  // namespace bayline::pipeline
