// PipelineState: the implementation behind Pipeline (pipeline.h). Split over files by job:
//   pipeline.cc        construction, Process (the per-observation path), RejectFrame
//   channel_queries.cc List, Ask, Reset, Reconfigure
//   snapshot_codec.cc  SaveChannels, RestoreChannels
#pragma once

#include <array>
#include <cstdint>
#include <memory>
#include <string>
#include <unordered_map>
#include <vector>

#include "bayline/v1/config.pb.h"
#include "daemon/pipeline/channel.h"
#include "daemon/pipeline/pipeline.h"
#include "daemon/pipeline/publications.h"
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
  PipelineState(const bayline::v1::DaemonConfig& config, uint32_t partition_index,
                uint32_t partition_count);

  void Process(const bayline::v1::Observation& obs, int64_t arrival_ns, PublicationSink& sink);
  void RejectFrame(std::string_view reason, std::string_view detail, int64_t arrival_ns,
                   PublicationSink& sink);
  bayline::v1::ChannelList List(std::string_view glob) const;
  std::optional<bayline::v1::ChannelReport> Ask(std::string_view channel) const;
  bool Reset(std::string_view channel);
  void SaveChannels(bayline::v1::Snapshot* out) const;
  est::Status RestoreChannels(const bayline::v1::Snapshot& in, std::vector<std::string>* reset);
  est::Status Reconfigure(const bayline::v1::DaemonConfig& config, std::vector<std::string>* reset);

  Counters& counters() { return counters_; }
  const Counters& counters() const { return counters_; }

 private:
  using Registry = std::unordered_map<std::string, Channel>;

  bool Owns(std::string_view name) const;
  void AnswerPrediction(const bayline::v1::Observation& obs, int64_t time_ns,
                        PublicationSink& sink);
  // Updates every estimator; on a failure rolls back those already updated. Fills innovations_.
  est::Status UpdateEstimators(Channel& ch, const est::Sample& sample);
  void RunDetectors(const std::string& name, Channel& ch, const est::Sample& sample, uint64_t seq,
                    int64_t time_ns, PublicationSink& sink);
  void ApplyPublishPolicy(const std::string& name, Channel& ch, uint64_t seq, int64_t time_ns,
                          PublicationSink& sink);
  // Fills x_full_ (intercept column first when the spec has one) and returns the sample.
  est::Sample BuildSample(const ResolvedSpec& spec, const bayline::v1::Observation& obs,
                          int64_t time_ns);

  bayline::v1::DaemonConfig config_;
  EffectiveLimits limits_;
  uint32_t partition_index_;
  uint32_t partition_count_;
  RuleSet rules_;
  Registry channels_;
  Counters counters_;
  Publisher publisher_{&counters_};

  // Reused scratch of the per-observation path.
  std::vector<double> x_full_;
  std::vector<EstimatorSlot> backup_;
  std::array<est::Innovation, kMaxEstimatorsPerChannel> innovations_;
  std::array<est::RecursiveResidual, kMaxEstimatorsPerChannel> residuals_;
};

}  // namespace bayline::pipeline
