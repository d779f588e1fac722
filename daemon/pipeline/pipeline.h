// The pipeline: rules -> channel registry -> update -> detect -> publish policy.
//
// A Pipeline holds every channel of the observations it is given: which channels reach which
// Pipeline is the caller's choice (the daemon runs one per worker thread and routes each channel
// to one of them, daemon/server/routing.h; `bayline replay` runs one over a file). Both publish
// exactly the same things for the same observations, because everything that decides a
// publication (rules, estimators, detectors, publish policy, sequence checks) lives here.
//
// Its interface uses: publication_sink.h (where publications go), counters.h (Counters),
// daemon_config.h (ValidateConfig, DefaultConfig, ConfigDigest), channel_name.h (ChannelHash).
//
// Per observation (Process):
//   1. validate the channel name (empty_channel_name, channel_name_too_long, invalid_channel_name)
//      and the regressor count (too_many_regressors): the length always, the rest (UTF-8, control
//      characters) only for a name that is not registered, since a registered name was validated
//      when its channel was created;
//   2. find the channel (by ChannelHash, computed once, or taken from a caller that hashed the name
//      to route it), or
//      resolve a new one from the first matching rule (no_matching_rule, channel_limit); a rule
//      with model "auto" becomes gaussian without regressors and linear with intercept with
//      regressors; a new channel is registered only once its first observation is absorbed;
//   3. validate the values against every estimator and detector of the channel BEFORE any of them
//      is updated (non_finite, wrong_regressor_count, out_of_domain, invalid_weight); a rejected
//      observation publishes exactly one InputError and changes no state at all;
//   4. check seq (seq_window.h): a duplicate is dropped and counted (no InputError); gaps and
//      reordering counted; a number the window cannot place is refused (implausible_seq: 0 after
//      numbering, above 2^63-1, or more than 2^32 ahead; seq_too_old: more than 63 behind), and a
//      run of 4 such consecutive numbers restarts the window (counted as a gap);
//   5. update every estimator (if one reports a numerical failure, the ones already updated are
//      rolled back and an InputError "numerical_failure" is published);
//   6. feed each detector its standardized innovation; publish alarm transitions immediately and,
//      on a raise with inflate_on_alarm > 1, inflate the watched estimator's covariance;
//   7. publish one Estimate per estimator per the publish policy.
// An observation with regressors and no y is a prediction request: one Prediction per estimator
// that can predict, nothing changes (unknown channel: InputError "unknown_channel").
//
// Sequence numbers: the channel keeps the highest seq accepted and a 64-bit bitmap of the 64
// numbers up to it. seq 0 means "unnumbered" (numbered last_seq + 1). A seq up to 2^32 above the
// highest is new (a jump by more than one counts one gap); a seq inside the window is a duplicate
// if its bit is set, else a late arrival (counted as reordered and absorbed); a seq more than 63
// below the highest cannot be told from a re-sent duplicate and is refused (seq_too_old), as is a
// seq beyond 2^63-1 or more than 2^32 ahead (implausible_seq). Four refused numbers in a row that
// continue one another restart the window at the fourth, so no single observation can jam a
// channel (seq_window.h has the rule and its price). A refused number changes no channel state
// except that run.
//
// Time: Observation.time_ns, else the arrival time; estimators see seconds since the epoch.
//
// Thread safety: none. One thread owns a Pipeline (the daemon gives each worker its own).
// Allocation: the per-observation path reuses its publication messages and topic strings and
// allocates nothing for a channel of fixed-size estimators, except when an estimate is published
// (reports are built in vectors) and on rejections (messages).
#pragma once

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
#include "daemon/pipeline/channel_budget.h"
#include "daemon/pipeline/counters.h"
#include "daemon/pipeline/publication_sink.h"
#include "estimators/core/status.h"

namespace bayline::pipeline {

class PipelineState;  // the implementation (pipeline_state.h)

class Pipeline {
 public:
  // config must have passed ValidateConfig (daemon_config.h). Empty rules / zero limits mean the
  // defaults of DefaultConfig(). Calibrates every detector threshold of every rule (a rule whose
  // calibration fails rejects its channels with reason "invalid_config"; Reconfigure reports it).
  // limits.max_channels counts the channels of every pipeline sharing `channel_budget` (the
  // daemon's workers share one); nullptr: a budget of this pipeline's own. The pipeline sets the
  // budget's limit (here and on Reconfigure) and gives its channels back when destroyed.
  explicit Pipeline(const bayline::v1::DaemonConfig& config,
                    std::shared_ptr<ChannelBudget> channel_budget = nullptr);
  ~Pipeline();
  Pipeline(const Pipeline&) = delete;
  Pipeline& operator=(const Pipeline&) = delete;

  // Absorbs one observation (see the header comment). arrival_ns is used when obs.time_ns() == 0.
  void Process(const bayline::v1::Observation& obs, int64_t arrival_ns, PublicationSink& sink);

  // Absorbs observations[i] with arrival time arrival_ns[i], in order: publishes exactly what
  // calling Process for each would. Faster with many channels: while one observation is
  // processed, the lookups of the next ones are started (their names hashed, their registry slots
  // and channel blocks prefetched), hiding most of the memory latency. Throws
  // std::invalid_argument, processing nothing, when the two sizes differ.
  void ProcessBatch(
      const google::protobuf::RepeatedPtrField<bayline::v1::Observation>& observations,
      std::span<const int64_t> arrival_ns, PublicationSink& sink);
  // The same, for a caller that has hashed the names already (the daemon's ingest thread, to route
  // them): channel_hashes[i] must be ChannelHash(observations[i].channel()) (channel_name.h), and
  // is then not
  // computed again (an empty span: hashed here). Throws std::invalid_argument, processing nothing,
  // when a size differs.
  void ProcessBatch(
      const google::protobuf::RepeatedPtrField<bayline::v1::Observation>& observations,
      std::span<const int64_t> arrival_ns, std::span<const uint64_t> channel_hashes,
      PublicationSink& sink);

  // Publishes an InputError for a frame that could not be decoded (reason "malformed_frame" or
  // "oversized_frame") and counts it.
  void RejectFrame(std::string_view reason, std::string_view detail, int64_t arrival_ns,
                   PublicationSink& sink);

  // Channels whose name matches `glob` (rule syntax; "" = all), sorted by name.
  bayline::v1::ChannelList List(std::string_view glob) const;
  // Current estimates and detector states of a channel; nullopt for an unknown channel.
  std::optional<bayline::v1::ChannelReport> Ask(std::string_view channel) const;
  // Forgets a channel (it restarts from its rule with its next observation); false if unknown.
  bool Reset(std::string_view channel);
  const Counters& counters() const;
  const std::shared_ptr<ChannelBudget>& channel_budget() const;

  // Appends one ChannelSnapshot per channel (sorted by name) and sets format_version and
  // config_digest. Restoring and continuing is bit-identical to never stopping.
  void SaveChannels(bayline::v1::Snapshot* out) const;
  // Appends to *out the encoding of the Snapshot SaveChannels would fill, channel by channel, and
  // returns the number of channels: memory beyond the encoded bytes stays constant. Encoded
  // Snapshots concatenate into one (protobuf merges repeated fields; these scalars are equal).
  uint64_t AppendSerializedChannels(std::string* out) const;
  // Restores the channels of `in`, each on its own. A channel whose record cannot be restored
  // (invalid or repeated name, unknown model, components that do not match its spec, a state that
  // fails its estimator's or detector's invariants, an inconsistent seq window) is set aside: it is
  // not restored (it restarts from its rule with its next observation), a line naming it and the
  // reason is appended to *not_restored (if given) and counters().channels_not_restored counts it;
  // every other channel is restored. A channel whose
  // spec digest no longer matches its rule (or that no rule matches any more) is not restored: it
  // restarts from its rule, and its name is appended to *reset_channels (if given). A restored
  // channel replaces a channel of the same name already held. Only a snapshot that cannot be read
  // as a whole (another format_version, or more channels than limits.max_channels) returns
  // kInvalidState, changing nothing.
  bayline::est::Status RestoreChannels(const bayline::v1::Snapshot& in,
                                       std::vector<std::string>* reset_channels,
                                       std::vector<std::string>* not_restored = nullptr);
  bayline::est::Status RestoreChannels(const bayline::v1::Snapshot& in);

  // Reload: validates and calibrates the new config first (error: nothing changed). New rules apply
  // to new channels; a channel whose resolved spec changed (or that no rule matches any more) is
  // reset and its name appended to *reset_channels; the others keep their state.
  bayline::est::Status Reconfigure(const bayline::v1::DaemonConfig& config,
                                   std::vector<std::string>* reset_channels);

 private:
  std::unique_ptr<PipelineState> state_;
};

}  // namespace bayline::pipeline
