// Saving all workers' channels into one snapshot file, and restoring the newest good snapshot at
// start-up.
//
// The payload is a bayline.v1.Snapshot (written by the pipeline library); the file container
// (header, checksums, atomic replacement, rotation) is snapshot_file.h's.
#pragma once

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

// Asks every worker for its channels (a task queued behind the work already handed to it, so the
// snapshot reflects every observation ingested before the call) and writes one snapshot file.
// Supervisor thread only. On failure returns false with *error; files on disk are untouched.
bool WriteSnapshot(const std::vector<std::unique_ptr<Worker>>& workers, SnapshotStore& store,
                   const bayline::v1::DaemonConfig& config, bayline::v1::SnapshotInfo* info,
                   std::string* error);

struct RestoreOutcome {
  std::string path;                         // file restored; empty when starting empty
  uint64_t channels = 0;                    // channels restored
  uint64_t other_shard = 0;                 // channels in the file that belong to other shards
  std::vector<std::string> skipped;         // newer files not used, each with the reason
  std::vector<std::string> reset_channels;  // restored as new because their spec changed
  std::vector<std::string> not_restored;    // channels set aside, each "channel \"name\": reason"
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

}  // namespace bayline::server
