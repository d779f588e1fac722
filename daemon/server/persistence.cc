#include "daemon/server/persistence.h"

#include <chrono>

#include "daemon/pipeline/channel_name.h"
#include "daemon/server/config_file.h"
#include "daemon/server/routing.h"

namespace bayline::server {
namespace {

void RebuildEmpty(const bayline::v1::DaemonConfig& config,
                  std::vector<std::unique_ptr<pipeline::Pipeline>>* pipelines) {
  for (auto& p : *pipelines) p = std::make_unique<pipeline::Pipeline>(config);
}

}  // namespace

bool WriteSnapshot(const std::vector<std::unique_ptr<Worker>>& workers, SnapshotStore& store,
                   const bayline::v1::DaemonConfig& config, bayline::v1::SnapshotInfo* info,
                   std::string* error) {
  bayline::v1::Snapshot all;
  for (const auto& worker : workers) {
    bayline::v1::Snapshot part = worker->Call([](pipeline::Pipeline& p) {
      bayline::v1::Snapshot s;
      p.SaveChannels(&s);
      return s;
    });
    all.set_format_version(part.format_version());
    all.set_config_digest(part.config_digest());
    for (auto& channel : *part.mutable_channels()) all.add_channels()->Swap(&channel);
  }
  all.set_written_time_ns(std::chrono::duration_cast<std::chrono::nanoseconds>(
                              std::chrono::system_clock::now().time_since_epoch())
                              .count());
  std::string payload;
  if (!all.SerializeToString(&payload)) {
    *error = "serialize snapshot: failed";
    return false;
  }
  std::filesystem::path path;
  uint64_t bytes = 0;
  if (!store.Write(payload, ConfigDigest(config), &path, &bytes, error)) return false;
  info->set_path(path.string());
  info->set_channels(uint64_t(all.channels_size()));
  info->set_bytes(bytes);
  return true;
}

RestoreOutcome RestoreNewestGood(const SnapshotStore& store, const bayline::v1::DaemonConfig& config,
                                 const Shard& shard,
                                 std::vector<std::unique_ptr<pipeline::Pipeline>>* pipelines) {
  RestoreOutcome outcome;
  const size_t workers = pipelines->size();
  for (const auto& path : store.ListNewestFirst()) {
    SnapshotFileContents contents;
    std::string error;
    if (!ReadSnapshotFile(path, &contents, &error)) {
      outcome.skipped.push_back(error);
      continue;
    }
    bayline::v1::Snapshot snapshot;
    if (!snapshot.ParseFromString(contents.payload)) {
      outcome.skipped.push_back(path.string() + ": payload is not a bayline.v1.Snapshot");
      continue;
    }
    // Split by owner; the metadata goes with every part.
    std::vector<bayline::v1::Snapshot> parts(workers);
    for (auto& part : parts) {
      part.set_format_version(snapshot.format_version());
      part.set_config_digest(snapshot.config_digest());
      part.set_written_time_ns(snapshot.written_time_ns());
    }
    uint64_t other_shard = 0;
    for (auto& channel : *snapshot.mutable_channels()) {
      const uint64_t h = pipeline::ChannelHash(channel.name());
      if (!InShard(h, shard)) {
        ++other_shard;
        continue;
      }
      parts[WorkerOf(h, shard, workers)].add_channels()->Swap(&channel);
    }
    std::vector<std::string> reset;
    bool ok = true;
    uint64_t restored = 0;
    for (size_t w = 0; w < workers && ok; ++w) {
      const bayline::est::Status status = (*pipelines)[w]->RestoreChannels(parts[w], &reset);
      if (!status.ok()) {
        outcome.skipped.push_back(path.string() + ": " + status.ToString());
        ok = false;
      }
      restored += uint64_t(parts[w].channels_size());
    }
    if (!ok) {
      RebuildEmpty(config, pipelines);
      continue;
    }
    outcome.path = path.string();
    outcome.channels = restored - reset.size();
    outcome.other_shard = other_shard;
    outcome.reset_channels = std::move(reset);
    return outcome;
  }
  return outcome;
}

}  // namespace bayline::server
