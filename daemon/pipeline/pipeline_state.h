// PipelineState: the implementation behind Pipeline (pipeline.h). Split over files by job:
//   pipeline.cc        construction, Process (the per-observation path), RejectFrame
//   channel_queries.cc List, Ask, Reset, Reconfigure
//   snapshot_codec.cc  SaveChannels, AppendSerializedChannels, RestoreChannels
#pragma once

#include <array>
#include <cstdint>
#include <memory>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "bayline/v1/config.pb.h"
#include "bayline/v1/control.pb.h"
#include "bayline/v1/observation.pb.h"
#include "bayline/v1/snapshot.pb.h"
#include "daemon/pipeline/channel.h"
#include "daemon/pipeline/channel_budget.h"
#include "daemon/pipeline/channel_name.h"
#include "daemon/pipeline/channel_registry.h"
#include "daemon/pipeline/counters.h"
#include "daemon/pipeline/publication_builder.h"
#include "daemon/pipeline/publication_sink.h"
#include "daemon/pipeline/rule_set.h"

namespace bayline::pipeline {

// Limits in effect (zero fields of the config replaced by their defaults).
struct EffectiveLimits {
  uint64_t max_channels = 1000000;
  uint32_t max_channel_name_bytes = 256;
  uint32_t max_regressors = 32;
};
EffectiveLimits LimitsOf(const bayline::v1::DaemonConfig& config);

class PipelineState {
 public:
  // budget: shared with the daemon's other pipelines; nullptr: one of its own.
  PipelineState(const bayline::v1::DaemonConfig& config, std::shared_ptr<ChannelBudget> budget);
  ~PipelineState();  // gives its channels back to the budget

  void Process(const bayline::v1::Observation& obs, int64_t arrival_ns, PublicationSink& sink) {
    ProcessHashed(obs, arrival_ns, nullptr, sink);
  }
  // channel_hashes: empty (hashed here) or ChannelHash of every observation's name.
  void ProcessBatch(
      const google::protobuf::RepeatedPtrField<bayline::v1::Observation>& observations,
      std::span<const int64_t> arrival_ns, std::span<const uint64_t> channel_hashes,
      PublicationSink& sink);
  void RejectFrame(std::string_view reason, std::string_view detail, int64_t arrival_ns,
                   PublicationSink& sink);
  bayline::v1::ChannelList List(std::string_view glob) const;
  std::optional<bayline::v1::ChannelReport> Ask(std::string_view channel) const;
  bool Reset(std::string_view channel);
  void SaveChannels(bayline::v1::Snapshot* out) const;
  uint64_t AppendSerializedChannels(std::string* out) const;
  est::Status RestoreChannels(const bayline::v1::Snapshot& in, std::vector<std::string>* reset,
                              std::vector<std::string>* not_restored);
  est::Status Reconfigure(const bayline::v1::DaemonConfig& config, std::vector<std::string>* reset);

  const std::shared_ptr<ChannelBudget>& channel_budget() const { return budget_; }
  Counters& counters() { return counters_; }
  const Counters& counters() const { return counters_; }

 private:
  std::vector<const Channel*> ChannelsByName() const;  // every channel, sorted by name
  // Process with ChannelHash(obs.channel()) already computed (*hash) or not (nullptr).
  void ProcessHashed(const bayline::v1::Observation& obs, int64_t arrival_ns, const uint64_t* hash,
                     PublicationSink& sink);
  // Publishes the InputError for a name that CheckChannelName refused.
  void RejectName(const bayline::v1::Observation& obs, ChannelNameProblem problem, int64_t time_ns,
                  PublicationSink& sink);
  void RejectChannelLimit(const bayline::v1::Observation& obs, int64_t time_ns,
                          PublicationSink& sink);
  // A new channel's spec from the first matching rule; nullptr after publishing the InputError.
  std::shared_ptr<const ResolvedSpec> ResolveNewChannel(const bayline::v1::Observation& obs,
                                                        int64_t time_ns, PublicationSink& sink);
  // ch: the channel, nullptr when unknown.
  void AnswerPrediction(const Channel* ch, const bayline::v1::Observation& obs, int64_t time_ns,
                        PublicationSink& sink);
  // Updates every estimator; on a failure restores those already updated from backup_, so a
  // rejection changes nothing. Only estimators that are followed by another are backed up (the
  // last one's own Update changes nothing when it fails). Fills innovations_ and residuals_.
  est::Status UpdateEstimators(Channel& ch, const est::Sample& sample);
  void RunDetectors(Channel& ch, const est::Sample& sample, uint64_t seq, int64_t time_ns,
                    PublicationSink& sink);
  void ApplyPublishPolicy(Channel& ch, uint64_t seq, int64_t time_ns, PublicationSink& sink);
  // The sample of an observation; regressors are read in place unless the spec has an intercept
  // column, which is put first in x_full_ with them.
  est::Sample BuildSample(const ResolvedSpec& spec, const bayline::v1::Observation& obs,
                          int64_t time_ns);

  bayline::v1::DaemonConfig config_;
  EffectiveLimits limits_;
  std::shared_ptr<ChannelBudget> budget_;  // limits.max_channels over every sharing pipeline
  RuleSet rules_;
  ChannelRegistry channels_;
  Counters counters_;
  PublicationBuilder publications_{&counters_};

  // Reused scratch of the per-observation path.
  std::vector<double> x_full_;
  std::array<EstimatorSlot::Backup, kMaxEstimatorsPerChannel - 1> backup_;
  std::array<est::Innovation, kMaxEstimatorsPerChannel> innovations_;
  std::array<est::RecursiveResidual, kMaxEstimatorsPerChannel> residuals_;
};

}  // namespace bayline::pipeline
