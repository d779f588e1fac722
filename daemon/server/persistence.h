// Saving all workers' channels into one snapshot file, and restoring the newest good snapshot at
// start-up.
//
// The payload is a bayline.v1.Snapshot (written by the pipeline library); the file container
// (header, checksums, atomic replacement, rotation) is snapshot_file.h's. A snapshot holds the
// channels of every worker in one list, so it restores whatever the worker count: each channel goes
// to the worker that owns it under the current routing (routing.h), and the workers' pipelines
// share one channel budget (limits.max_channels is per daemon, channel_budget.h).
//
// Damaged state is never lost quietly: a snapshot file that cannot be restored is logged at error
// level and moved into `damaged/` in the state directory (out of rotation, never pruned), and
// starting empty although snapshot files existed is an error-level log line; with --strict-state
// the daemon refuses to start instead and leaves every file where it is.
#pragma once

#include <filesystem>
#include <future>
#include <memory>
#include <string>
#include <vector>

#include "bayline/v1/config.pb.h"
#include "bayline/v1/control.pb.h"
#include "daemon/pipeline/pipeline.h"
#include "daemon/server/daemon_options.h"
#include "daemon/server/snapshot_file.h"
#include "daemon/server/worker.h"

namespace bayline::server {

// Writing a snapshot, in two halves, at a consistent cut (Ingest::RunAtFrameBoundary):
// PostSnapshotCapture queues, on every worker, a task that copies its channels as they are once
// everything queued before it is processed (or, `urgent`, once the batch in progress is: prompt
// under load, but not a cut across workers), and returns without waiting; WriteCapturedSnapshot
// waits for the copies and writes one file recording `journal_segment` (the first journal
// segment the snapshot does not cover; 0 without a journal). The copies are encoded Snapshots
// (Pipeline::AppendSerializedChannels) written one after the other, so a snapshot needs memory
// for its encoded bytes only, not for a message of every channel.
struct CapturedChannels {
  std::string encoded;  // a serialized bayline.v1.Snapshot of one worker's channels
  uint64_t channels = 0;
};
using SnapshotCapture = std::vector<std::future<CapturedChannels>>;
SnapshotCapture PostSnapshotCapture(const std::vector<std::unique_ptr<Worker>>& workers,
                                    bool urgent);
bool WriteCapturedSnapshot(SnapshotCapture capture, SnapshotStore& store,
                           const bayline::v1::DaemonConfig& config, uint64_t journal_segment,
                           bayline::v1::SnapshotInfo* info, std::string* error);

// One pipeline per worker, all sharing one pipeline::ChannelBudget of limits.max_channels.
std::vector<std::unique_ptr<pipeline::Pipeline>> MakeWorkerPipelines(
    const bayline::v1::DaemonConfig& config, size_t workers);

struct RestoreOutcome {
  std::string path;                             // file restored; empty when starting empty
  uint64_t channels = 0;                        // channels restored
  uint64_t other_shard = 0;                     // channels in the file of other shards
  std::vector<std::string> skipped;             // newer files not used, each with the reason
  std::vector<std::filesystem::path> unusable;  // those files, in the same order
  std::vector<std::string> reset_channels;      // restored as new because their spec changed
  std::vector<std::string> not_restored;        // channels set aside: "channel \"name\": reason"
  uint64_t journal_segment = 0;  // first journal segment the restored file does not cover
};

// Before the workers start: tries the snapshot files newest first and restores the first that
// decodes and that every pipeline accepts as a whole; each channel goes to the pipeline of the
// worker that owns it (routing.h). A file that cannot be used (unreadable, bad header or
// checksum, a payload that does not parse, or one Pipeline::RestoreChannels refuses as a whole)
// leaves every pipeline empty (they are rebuilt from `config`) and the next older file is tried.
// A channel of a usable file whose own record cannot be restored does not make the file unusable:
// it alone is set aside (listed in not_restored, counted by the pipelines' channels_not_restored)
// and every other channel is restored.
RestoreOutcome RestoreNewestGood(const SnapshotStore& store,
                                 const bayline::v1::DaemonConfig& config, const Shard& shard,
                                 std::vector<std::unique_ptr<pipeline::Pipeline>>* pipelines);

// Start-up: RestoreNewestGood, and the log lines that say what happened. Every file not used is
// logged at error level and moved into damaged/ (unless refusing to start). When files existed and
// none was restored: with `strict_state` logs the refusal and returns false (the caller exits 1,
// nothing on disk changed); otherwise logs at error level that the daemon starts empty and where
// the files went. Returns true to go on, with *journal_segment the first journal segment the
// restored file does not cover (0 when none was restored).
bool RestoreAtStart(SnapshotStore& store, const bayline::v1::DaemonConfig& config,
                    const Shard& shard, bool strict_state,
                    std::vector<std::unique_ptr<pipeline::Pipeline>>* pipelines,
                    uint64_t* journal_segment);

}  // namespace bayline::server
