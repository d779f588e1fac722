// The pipeline: rules -> channel registry -> update -> detect -> publish policy.
//
// One Pipeline owns a partition of the channels (those with ChannelHash(name) % partition_count ==
// partition_index). The daemon runs one per worker thread; `bayline replay` runs one over a file.
// Both publish exactly the same things for the same observations, because everything that decides a
// publication (rules, estimators, detectors, publish policy, sequence checks) lives here.
//
// Per observation (Process):
//   1. validate the channel name (empty_channel_name, channel_name_too_long, invalid_channel_name)
//      and the regressor count (too_many_regressors): the length always, the rest (UTF-8, control
//      characters) only for a name that is not registered, since a registered name was validated
//      when its channel was created;
//   2. find the channel (by ChannelHash, computed once and also deciding the partition), or
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
#include <map>
#include <memory>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "bayline/v1/config.pb.h"
#include "bayline/v1/control.pb.h"
#include "bayline/v1/observation.pb.h"
#include "bayline/v1/publication.pb.h"
#include "bayline/v1/snapshot.pb.h"
#include "daemon/pipeline/channel_budget.h"
#include "estimators/core/status.h"

namespace bayline::pipeline {

// Where publications go. Topic = "<kind>/<channel>", kind in {estimate, alarm, input_error,
// prediction}. The publication is only valid during the call (the pipeline reuses it).
class PublicationSink {
 public:
  virtual ~PublicationSink() = default;
  virtual void Publish(const std::string& topic, const bayline::v1::Publication& publication) = 0;
};

// Stable 64-bit FNV-1a hash of a channel name, used to partition channels over workers and shards.
uint64_t ChannelHash(std::string_view name);

// Ok, or kInvalidConfig whose message names the field path, e.g.
// "rules[2].spec.detectors[0].arl0: must be in [2, 1e7], got 1". Checks everything that can be
// checked without data (threshold calibration runs when a Pipeline is built or reconfigured).
bayline::est::Status ValidateConfig(const bayline::v1::DaemonConfig& config);

// The embedded default configuration: loopback endpoints from daemon/defaults.h, default limits,
// and one rule "default": match "**", model "auto", all estimators the model allows, a
// self-starting CUSUM with arl0 1000 watching the first estimator.
bayline::v1::DaemonConfig DefaultConfig();

// Digest (16 hex digits) of a configuration, stored in snapshots.
std::string ConfigDigest(const bayline::v1::DaemonConfig& config);

struct Counters {
  uint64_t accepted = 0;        // observations absorbed
  uint64_t rejected_total = 0;  // InputErrors published (frames and observations)
  uint64_t publications = 0;    // everything handed to a sink
  uint64_t seq_gaps = 0;
  uint64_t seq_duplicates = 0;
  uint64_t seq_reordered = 0;
  std::map<std::string, uint64_t> rejected_by_reason;
  uint64_t channels = 0;        // channels currently held
  uint64_t predictions = 0;     // prediction requests answered
  uint64_t not_owned = 0;       // observations of another partition's channels (ignored)
  uint64_t detector_skips = 0;  // detector updates skipped after a numerical failure
  uint64_t channels_not_restored = 0;  // snapshot channels set aside by RestoreChannels
};

class PipelineState;  // the implementation (pipeline_state.h)

class Pipeline {
 public:
  // config must have passed ValidateConfig. Keeps only channels with
  // ChannelHash(name) % partition_count == partition_index. Empty rules / zero limits mean the
  // defaults of DefaultConfig(). Calibrates every detector threshold of every rule (a rule whose
  // calibration fails rejects its channels with reason "invalid_config"; Reconfigure reports it).
  // limits.max_channels counts the channels of every pipeline sharing `channel_budget` (the
  // daemon's workers share one); nullptr: a budget of this pipeline's own. The pipeline sets the
  // budget's limit (here and on Reconfigure) and gives its channels back when destroyed.
  Pipeline(const bayline::v1::DaemonConfig& config, uint32_t partition_index = 0,
           uint32_t partition_count = 1, std::shared_ptr<ChannelBudget> channel_budget = nullptr);
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
  void ProcessBatch(const google::protobuf::RepeatedPtrField<bayline::v1::Observation>& observations,
                    std::span<const int64_t> arrival_ns, PublicationSink& sink);
  // The same, for a caller that has hashed the names already (the daemon's ingest thread, to route
  // them): channel_hashes[i] must be ChannelHash(observations[i].channel()), and is then not
  // computed again (an empty span: hashed here). Throws std::invalid_argument, processing nothing,
  // when a size differs.
  void ProcessBatch(const google::protobuf::RepeatedPtrField<bayline::v1::Observation>& observations,
                    std::span<const int64_t> arrival_ns, std::span<const uint64_t> channel_hashes,
                    PublicationSink& sink);

  // Lookahead hints, for a caller that processes observations one by one but knows the
  // ChannelHash of the next ones (e.g. computed to route them): PrefetchSlot(hash) two
  // observations ahead and PrefetchChannel(hash) one ahead start loading the registry slot and the
  // channel's block (what ProcessBatch does itself). Any hash is safe: no effect on behaviour.
  void PrefetchSlot(uint64_t channel_hash) const;
  void PrefetchChannel(uint64_t channel_hash) const;

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
  // Restores the channels of `in`, each on its own. A channel whose record cannot be restored
  // (invalid or repeated name, unknown model, components that do not match its spec, a state that
  // fails its estimator's or detector's invariants, an inconsistent seq window) is set aside: it is
  // not restored (it restarts from its rule with its next observation), a line naming it and the
  // reason is appended to *not_restored (if given) and counters().channels_not_restored counts it;
  // every other channel is restored. Channels of other partitions are skipped. A channel whose
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

// JSON rendering of a publication with protobuf's own JSON mapping (proto field names, snake_case,
// zero values printed), one line, no trailing newline.
std::string ToJsonLine(const bayline::v1::Publication& publication);

}  // namespace bayline::pipeline
