#include "daemon/pipeline/pipeline.h"

#include <cassert>
#include <cmath>
#include <span>
#include <stdexcept>
#include <string>

#include "daemon/pipeline/channel_name.h"
#include "daemon/pipeline/pipeline_state.h"

namespace bayline::pipeline {

EffectiveLimits LimitsOf(const bayline::v1::DaemonConfig& config) {
  EffectiveLimits l;
  const auto& c = config.limits();
  if (c.max_channels() > 0) l.max_channels = c.max_channels();
  if (c.max_channel_name_bytes() > 0) l.max_channel_name_bytes = c.max_channel_name_bytes();
  if (c.max_regressors() > 0) l.max_regressors = c.max_regressors();
  return l;
}

PipelineState::PipelineState(const bayline::v1::DaemonConfig& config,
                             std::shared_ptr<ChannelBudget> budget)
    : config_(config),
      limits_(LimitsOf(config)),
      budget_(budget != nullptr ? std::move(budget)
                                : std::make_shared<ChannelBudget>(limits_.max_channels)) {
  budget_->set_limit(limits_.max_channels);
  // A rule that fails calibration rejects its channels (see pipeline.h).
  (void)rules_.Build(config_, &budget_->fleet());
  x_full_.reserve(limits_.max_regressors + 1);
}

PipelineState::~PipelineState() { budget_->Release(channels_.size()); }

void PipelineState::RejectChannelLimit(const bayline::v1::Observation& obs, int64_t time_ns,
                                       PublicationSink& sink) {
  publications_.InputError(sink, obs.channel(), obs.seq(), time_ns, "channel_limit",
                           "channel limit of " + std::to_string(budget_->limit()) +
                               " reached; new channels are refused");
}

est::Sample PipelineState::BuildSample(const ResolvedSpec& spec,
                                       const bayline::v1::Observation& obs, int64_t time_ns) {
  est::Sample s;
  if (spec.intercept) {
    x_full_.clear();
    x_full_.push_back(1.0);
    x_full_.insert(x_full_.end(), obs.x().begin(), obs.x().end());
    s.x = x_full_;
  } else {
    s.x = std::span<const double>(obs.x().data(), static_cast<std::size_t>(obs.x_size()));
  }
  s.y = obs.has_y() ? obs.y() : est::kNaN;
  s.trials = obs.has_trials() ? obs.trials() : 1.0;
  s.exposure = obs.has_exposure() ? obs.exposure() : 1.0;
  s.weight = obs.has_weight() ? obs.weight() : 1.0;
  s.time = static_cast<double>(time_ns) * 1e-9;
  return s;
}

void PipelineState::RejectName(const bayline::v1::Observation& obs, ChannelNameProblem problem,
                               int64_t time_ns, PublicationSink& sink) {
  // The name is not echoed: it may be invalid UTF-8 (unserializable) or huge.
  const std::string detail =
      problem == ChannelNameProblem::kTooLong
          ? "channel name has " + std::to_string(obs.channel().size()) + " bytes, limit " +
                std::to_string(limits_.max_channel_name_bytes)
      : problem == ChannelNameProblem::kEmpty
          ? std::string("channel name is empty")
          : std::string("channel name is not valid UTF-8 or contains control characters");
  publications_.InputError(sink, "", obs.seq(), time_ns, ChannelNameReason(problem), detail);
}

std::shared_ptr<const ResolvedSpec> PipelineState::ResolveNewChannel(
    const bayline::v1::Observation& obs, int64_t time_ns, PublicationSink& sink) {
  const std::string& name = obs.channel();
  const int rule = rules_.Match(name);
  if (rule < 0) {
    publications_.InputError(sink, name, obs.seq(), time_ns, "no_matching_rule",
                             "no rule matches channel \"" + name + "\"");
    return nullptr;
  }
  if (!budget_->HasRoom()) {
    RejectChannelLimit(obs, time_ns, sink);
    return nullptr;
  }
  std::shared_ptr<const ResolvedSpec> spec;
  const est::Status s =
      rules_.ResolveForObservation(rule, static_cast<uint32_t>(obs.x_size()), &spec);
  if (!s.ok()) {
    publications_.InputError(sink, name, obs.seq(), time_ns, est::ErrorCodeName(s.code()),
                             s.message());
    return nullptr;
  }
  return spec;
}

void PipelineState::ProcessBatch(
    const google::protobuf::RepeatedPtrField<bayline::v1::Observation>& observations,
    std::span<const int64_t> arrival_ns, std::span<const uint64_t> channel_hashes,
    PublicationSink& sink) {
  const std::size_t n = static_cast<std::size_t>(observations.size());
  if (arrival_ns.size() != n) {
    throw std::invalid_argument("ProcessBatch: " + std::to_string(n) + " observations but " +
                                std::to_string(arrival_ns.size()) + " arrival times");
  }
  if (!channel_hashes.empty() && channel_hashes.size() != n) {
    throw std::invalid_argument("ProcessBatch: " + std::to_string(n) + " observations but " +
                                std::to_string(channel_hashes.size()) + " channel hashes");
  }
  // Software pipeline over the batch: the name of observation i + kSlotAhead is hashed and its
  // registry slot prefetched, the block of observation i + 1 is prefetched through its (by then
  // cached) slot, and observation i is processed. Hashes are kept for names Process would not
  // refuse on length alone (those it refuses are never hashed), or taken from channel_hashes.
  constexpr std::size_t kSlotAhead = 2, kRing = 4;
  std::array<uint64_t, kRing> hashes{};
  std::array<bool, kRing> hashed{};
  auto stage = [&](std::size_t j) {
    const std::string& name = observations.Get(static_cast<int>(j)).channel();
    hashed[j % kRing] = !name.empty() && name.size() <= limits_.max_channel_name_bytes;
    if (hashed[j % kRing]) {
      hashes[j % kRing] = channel_hashes.empty() ? ChannelHash(name) : channel_hashes[j];
      assert(hashes[j % kRing] == ChannelHash(name));  // the callers' contract (debug builds)
      channels_.PrefetchSlot(hashes[j % kRing]);
    }
  };
  for (std::size_t j = 0; j < kSlotAhead && j < n; ++j) stage(j);
  for (std::size_t i = 0; i < n; ++i) {
    if (i + kSlotAhead < n) stage(i + kSlotAhead);
    if (i + 1 < n && hashed[(i + 1) % kRing]) channels_.PrefetchChannel(hashes[(i + 1) % kRing]);
    ProcessHashed(observations.Get(static_cast<int>(i)), arrival_ns[i],
                  hashed[i % kRing] ? &hashes[i % kRing] : nullptr, sink);
  }
}

void PipelineState::ProcessHashed(const bayline::v1::Observation& obs, int64_t arrival_ns,
                                  const uint64_t* known_hash, PublicationSink& sink) {
  const std::string& name = obs.channel();
  const int64_t time_ns = obs.time_ns() != 0 ? obs.time_ns() : arrival_ns;

  // A registered name passed CheckChannelName when its channel was created, so only the length
  // (the limit may have been lowered by a reload) is checked before the lookup, and the full
  // check runs for names that are not registered.
  if (name.empty() || name.size() > limits_.max_channel_name_bytes) {
    RejectName(obs, CheckChannelName(name, limits_.max_channel_name_bytes), time_ns, sink);
    return;
  }
  const uint64_t hash = known_hash != nullptr ? *known_hash : ChannelHash(name);
  Channel* ch = channels_.Find(name, hash);
  if (ch != nullptr) {
    ch->Prefetch();
  } else {
    if (const auto problem = CheckChannelName(name, limits_.max_channel_name_bytes);
        problem != ChannelNameProblem::kOk) {
      RejectName(obs, problem, time_ns, sink);
      return;
    }
  }
  if (static_cast<uint64_t>(obs.x_size()) > limits_.max_regressors) {
    publications_.InputError(sink, name, obs.seq(), time_ns, "too_many_regressors",
                             "x has " + std::to_string(obs.x_size()) + " entries, limit " +
                                 std::to_string(limits_.max_regressors));
    return;
  }
  if (!obs.has_y()) {
    if (obs.x_size() > 0) {
      AnswerPrediction(ch, obs, time_ns, sink);
    } else {
      publications_.InputError(sink, name, obs.seq(), time_ns, "non_finite",
                               "y is missing (and no regressors: not a prediction request)");
    }
    return;
  }

  std::shared_ptr<const ResolvedSpec> new_spec;
  if (ch == nullptr) {
    new_spec = ResolveNewChannel(obs, time_ns, sink);
    if (new_spec == nullptr) return;
  }
  const ResolvedSpec& spec = ch != nullptr ? *ch->spec : *new_spec;

  const est::Sample sample = BuildSample(spec, obs, time_ns);
  if (est::Status s = CheckObservation(spec, sample); !s.ok()) {
    publications_.InputError(sink, name, obs.seq(), time_ns, est::ErrorCodeName(s.code()),
                             s.message());
    return;
  }

  const SeqWindow window = ch != nullptr ? ch->seq : SeqWindow{};
  const uint64_t seq = window.Numbered(obs.seq());
  const SeqClass seq_class = window.Classify(seq);
  if (seq_class == SeqClass::kDuplicate) {
    ++counters_.seq_duplicates;
    return;
  }
  if (seq_class == SeqClass::kTooOld || seq_class == SeqClass::kImplausible) {
    if (ch != nullptr) ch->seq.Refuse(seq);  // only the re-synchronisation run changes
    publications_.InputError(sink, name, seq, time_ns, SeqRefusalReason(seq_class),
                             window.Explain(seq));
    return;
  }

  if (ch == nullptr) {
    // Registered only once its first observation is absorbed: a rejection leaves no channel.
    ChannelPtr fresh = Channel::Create(std::move(new_spec), name);
    if (est::Status s = UpdateEstimators(*fresh, sample); !s.ok()) {
      publications_.InputError(sink, name, seq, time_ns, est::ErrorCodeName(s.code()), s.message());
      return;
    }
    if (!budget_->TryReserve()) {  // another worker took the last unit since ResolveNewChannel
      RejectChannelLimit(obs, time_ns, sink);
      return;
    }
    ch = channels_.InsertOrReplace(std::move(fresh));
    counters_.channels = channels_.size();
  } else if (est::Status s = UpdateEstimators(*ch, sample); !s.ok()) {
    publications_.InputError(sink, name, seq, time_ns, est::ErrorCodeName(s.code()), s.message());
    return;
  }

  ch->seq.Accept(seq, seq_class);
  if (seq_class == SeqClass::kGap || seq_class == SeqClass::kRestart) ++counters_.seq_gaps;
  if (seq_class == SeqClass::kLate) ++counters_.seq_reordered;
  ++ch->accepted;
  ++counters_.accepted;
  if (time_ns > ch->last_time_ns) ch->last_time_ns = time_ns;

  RunDetectors(*ch, sample, seq, time_ns, sink);
  ApplyPublishPolicy(*ch, seq, time_ns, sink);
}

est::Status PipelineState::UpdateEstimators(Channel& ch, const est::Sample& sample) {
  const std::size_t n = ch.estimator_count();
  const ResolvedSpec& spec = *ch.spec;
  for (std::size_t i = 0; i < n; ++i) {
    EstimatorSlot& e = ch.estimator(i);
    if (i + 1 < n) e.SaveTo(&backup_[i]);  // same kind and size as last time: no allocation
    innovations_[i] = est::Innovation();
    residuals_[i] = est::RecursiveResidual();
    est::Innovation* innovation = spec.needs_innovation[i] ? &innovations_[i] : nullptr;
    est::Status s = e.Update(sample, innovation, &residuals_[i]);
    if (!s.ok()) {
      for (std::size_t j = 0; j < i; ++j) ch.estimator(j).RestoreFrom(backup_[j]);
      return s;
    }
  }
  return est::Status::Ok();
}

void PipelineState::RunDetectors(Channel& ch, const est::Sample& sample, uint64_t seq,
                                 int64_t time_ns, PublicationSink& sink) {
  const ResolvedSpec& spec = *ch.spec;
  const std::string_view name = ch.name();
  const std::span<DetectorSlot> detectors = ch.detectors();
  for (std::size_t d = 0; d < detectors.size(); ++d) {
    const DetectorSetup& setup = spec.detectors[d];
    const auto w = static_cast<std::size_t>(setup.watch);
    DetectorInput in;
    in.sample = &sample;
    in.innovation = &innovations_[w];
    in.rr = &residuals_[w];
    in.watched = &ch.estimator(w);
    in.level = spec.level;
    in.mark.seq = static_cast<int64_t>(seq);
    in.mark.time = sample.time;
    est::DetectorEvent event;
    if (!detectors[d].Update(setup, in, &event).ok()) {
      ++counters_.detector_skips;
      continue;
    }
    if (event.cleared) {
      publications_.Alarm(sink, name, setup, spec, event, false, seq, time_ns, sample.y);
    }
    if (event.raised) {
      detectors[d].RecordAlarm(
          publications_.Alarm(sink, name, setup, spec, event, true, seq, time_ns, sample.y));
      if (setup.inflate_on_alarm > 1 && ch.estimator(w).CanInflate()) {
        (void)ch.estimator(w).Inflate(setup.inflate_on_alarm);  // factor validated: cannot fail
      }
    }
  }
}

void PipelineState::ApplyPublishPolicy(Channel& ch, uint64_t seq, int64_t time_ns,
                                       PublicationSink& sink) {
  const ResolvedSpec& spec = *ch.spec;
  PublishState& p = ch.publish;
  ++p.since_publish;
  if (p.since_publish < spec.every_n) return;
  if (spec.min_interval_ns > 0 && p.published &&
      time_ns - p.last_publish_ns < spec.min_interval_ns) {
    return;
  }
  for (std::size_t i = 0; i < ch.estimator_count(); ++i) {
    publications_.Estimate(sink, ch.name(), spec, spec.estimators[i],
                           ch.estimator(i).Report(spec.level), seq, time_ns, ch.accepted);
  }
  p.since_publish = 0;
  p.last_publish_ns = time_ns;
  p.published = true;
}

void PipelineState::AnswerPrediction(const Channel* found, const bayline::v1::Observation& obs,
                                     int64_t time_ns, PublicationSink& sink) {
  const std::string& name = obs.channel();
  if (found == nullptr) {
    publications_.InputError(sink, name, obs.seq(), time_ns, "unknown_channel",
                             "prediction request for unknown channel \"" + name + "\"");
    return;
  }
  const Channel& ch = *found;
  const ResolvedSpec& spec = *ch.spec;
  if (!IsRegressionModel(spec.model) ||
      static_cast<uint32_t>(obs.x_size()) != spec.regressor_count) {
    publications_.InputError(sink, name, obs.seq(), time_ns, "wrong_regressor_count",
                             "prediction request has " + std::to_string(obs.x_size()) +
                                 " regressors, channel expects " +
                                 std::to_string(spec.regressor_count));
    return;
  }
  for (double v : obs.x()) {
    if (!std::isfinite(v)) {
      publications_.InputError(sink, name, obs.seq(), time_ns, "non_finite",
                               "a regressor of the prediction request is not finite");
      return;
    }
  }
  x_full_.clear();
  if (spec.intercept) x_full_.push_back(1.0);
  x_full_.insert(x_full_.end(), obs.x().begin(), obs.x().end());
  bool answered = false;
  for (std::size_t i = 0; i < ch.estimator_count(); ++i) {
    if (!ch.estimator(i).CanPredict()) continue;
    const est::Prediction p = ch.estimator(i).Predict(x_full_, spec.level);
    publications_.Prediction(sink, name, spec.estimators[i],
                             std::span<const double>(obs.x().data(), obs.x().size()), p, obs.seq(),
                             time_ns);
    answered = true;
  }
  if (answered) {
    ++counters_.predictions;
  } else {
    publications_.InputError(
        sink, name, obs.seq(), time_ns, "cannot_predict",
        "no estimator of this channel predicts (model " + std::string(ModelName(spec.model)) + ")");
  }
}

void PipelineState::RejectFrame(std::string_view reason, std::string_view detail,
                                int64_t arrival_ns, PublicationSink& sink) {
  publications_.InputError(sink, "", 0, arrival_ns, reason, detail);
}

// ---- Pipeline: forwards to PipelineState.

Pipeline::Pipeline(const bayline::v1::DaemonConfig& config,
                   std::shared_ptr<ChannelBudget> channel_budget)
    : state_(std::make_unique<PipelineState>(config, std::move(channel_budget))) {}
Pipeline::~Pipeline() = default;

void Pipeline::Process(const bayline::v1::Observation& obs, int64_t arrival_ns,
                       PublicationSink& sink) {
  state_->Process(obs, arrival_ns, sink);
}
void Pipeline::ProcessBatch(
    const google::protobuf::RepeatedPtrField<bayline::v1::Observation>& observations,
    std::span<const int64_t> arrival_ns, PublicationSink& sink) {
  state_->ProcessBatch(observations, arrival_ns, {}, sink);
}
void Pipeline::ProcessBatch(
    const google::protobuf::RepeatedPtrField<bayline::v1::Observation>& observations,
    std::span<const int64_t> arrival_ns, std::span<const uint64_t> channel_hashes,
    PublicationSink& sink) {
  state_->ProcessBatch(observations, arrival_ns, channel_hashes, sink);
}
void Pipeline::RejectFrame(std::string_view reason, std::string_view detail, int64_t arrival_ns,
                           PublicationSink& sink) {
  state_->RejectFrame(reason, detail, arrival_ns, sink);
}
bayline::v1::ChannelList Pipeline::List(std::string_view glob) const { return state_->List(glob); }
std::optional<bayline::v1::ChannelReport> Pipeline::Ask(std::string_view channel) const {
  return state_->Ask(channel);
}
bool Pipeline::Reset(std::string_view channel) { return state_->Reset(channel); }
const Counters& Pipeline::counters() const { return state_->counters(); }
const std::shared_ptr<ChannelBudget>& Pipeline::channel_budget() const {
  return state_->channel_budget();
}
void Pipeline::SaveChannels(bayline::v1::Snapshot* out) const { state_->SaveChannels(out); }
uint64_t Pipeline::AppendSerializedChannels(std::string* out) const {
  return state_->AppendSerializedChannels(out);
}
est::Status Pipeline::RestoreChannels(const bayline::v1::Snapshot& in,
                                      std::vector<std::string>* reset_channels,
                                      std::vector<std::string>* not_restored) {
  return state_->RestoreChannels(in, reset_channels, not_restored);
}
est::Status Pipeline::RestoreChannels(const bayline::v1::Snapshot& in) {
  return state_->RestoreChannels(in, nullptr, nullptr);
}
est::Status Pipeline::Reconfigure(const bayline::v1::DaemonConfig& config,
                                  std::vector<std::string>* reset_channels) {
  return state_->Reconfigure(config, reset_channels);
}

}  // namespace bayline::pipeline
