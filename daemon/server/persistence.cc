#include "daemon/server/persistence.h"

#include <spdlog/spdlog.h>

#include <chrono>

#include "daemon/pipeline/channel_name.h"
#include "daemon/server/config_file.h"
#include "daemon/server/routing.h"

namespace bayline::server {
namespace {

// Every pipeline empty again; each old one gives its channels back to the shared budget.
void RebuildEmpty(const bayline::v1::DaemonConfig& config,
                  std::vector<std::unique_ptr<pipeline::Pipeline>>* pipelines) {
  if (pipelines->empty()) return;
  const std::shared_ptr<pipeline::ChannelBudget> budget = pipelines->front()->channel_budget();
  for (auto& p : *pipelines) p = std::make_unique<pipeline::Pipeline>(config, budget);
}

}  // namespace

std::vector<std::unique_ptr<pipeline::Pipeline>> MakeWorkerPipelines(
    const bayline::v1::DaemonConfig& config, size_t workers) {
  // Every pipeline keeps all it is given: routing and the shard are the
  // daemon's job; the budget makes limits.max_channels count the channels of all of them.
  auto budget = std::make_shared<pipeline::ChannelBudget>(0);  // each pipeline sets the limit
  std::vector<std::unique_ptr<pipeline::Pipeline>> pipelines(workers);
  for (auto& p : pipelines) p = std::make_unique<pipeline::Pipeline>(config, budget);
  return pipelines;
}

SnapshotCapture PostSnapshotCapture(const std::vector<std::unique_ptr<Worker>>& workers,
                                    bool urgent) {
  SnapshotCapture capture;
  for (const auto& worker : workers) {
    auto task = std::make_shared<std::promise<CapturedChannels>>();
    capture.push_back(task->get_future());
    auto capture_task = [task](pipeline::Pipeline& p) {
      CapturedChannels captured;
      captured.channels = p.AppendSerializedChannels(&captured.encoded);
      task->set_value(std::move(captured));
    };
    if (urgent) {
      worker->PostUrgent(std::move(capture_task));
    } else {
      worker->Post(std::move(capture_task));
    }
  }
  return capture;
}

bool WriteCapturedSnapshot(SnapshotCapture capture, SnapshotStore& store,
                           const bayline::v1::DaemonConfig& config, uint64_t journal_segment,
                           bayline::v1::SnapshotInfo* info, std::string* error) {
  std::vector<CapturedChannels> parts;
  uint64_t channels = 0;
  for (auto& future : capture) {
    parts.push_back(future.get());
    channels += parts.back().channels;
  }
  // The journal segment and the write time go last, in a message of their own (the workers'
  // encodings do not set them).
  bayline::v1::Snapshot trailer;
  trailer.set_journal_segment(journal_segment);
  trailer.set_written_time_ns(std::chrono::duration_cast<std::chrono::nanoseconds>(
                                  std::chrono::system_clock::now().time_since_epoch())
                                  .count());
  std::string trailer_bytes;
  const std::string not_saved = std::to_string(channels) + " channels not saved: ";
  if (!trailer.SerializeToString(&trailer_bytes)) {
    *error = not_saved + "serialize snapshot: failed";
    return false;
  }
  std::vector<std::string_view> payload;
  for (const CapturedChannels& part : parts) payload.push_back(part.encoded);
  payload.push_back(trailer_bytes);
  info->set_channels(channels);
  std::filesystem::path path;
  uint64_t bytes = 0;
  if (!store.Write(payload, ConfigDigest(config), &path, &bytes, error)) {
    *error = not_saved + *error;
    return false;
  }
  info->set_path(path.string());
  info->set_bytes(bytes);
  return true;
}

RestoreOutcome RestoreNewestGood(const SnapshotStore& store,
                                 const bayline::v1::DaemonConfig& config, const Shard& shard,
                                 std::vector<std::unique_ptr<pipeline::Pipeline>>* pipelines) {
  RestoreOutcome outcome;
  const size_t workers = pipelines->size();
  for (const auto& path : store.ListNewestFirst()) {
    SnapshotFileContents contents;
    std::string error;
    if (!ReadSnapshotFile(path, &contents, &error)) {
      outcome.skipped.push_back(error);
      outcome.unusable.push_back(path);
      continue;
    }
    bayline::v1::Snapshot snapshot;
    if (!snapshot.ParseFromString(contents.payload)) {
      outcome.skipped.push_back(path.string() + ": payload is not a bayline.v1.Snapshot");
      outcome.unusable.push_back(path);
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
    std::vector<std::string> not_restored;
    bool ok = true;
    uint64_t restored = 0;
    for (size_t w = 0; w < workers && ok; ++w) {
      const bayline::est::Status status =
          (*pipelines)[w]->RestoreChannels(parts[w], &reset, &not_restored);
      if (!status.ok()) {
        outcome.skipped.push_back(path.string() + ": " + status.ToString());
        ok = false;
      }
      restored += uint64_t(parts[w].channels_size());
    }
    if (!ok) {
      outcome.unusable.push_back(path);
      RebuildEmpty(config, pipelines);
      continue;
    }
    outcome.path = path.string();
    outcome.channels = restored - reset.size() - not_restored.size();
    outcome.other_shard = other_shard;
    outcome.reset_channels = std::move(reset);
    outcome.journal_segment = snapshot.journal_segment();
    outcome.not_restored = std::move(not_restored);
    return outcome;
  }
  return outcome;
}

bool RestoreAtStart(SnapshotStore& store, const bayline::v1::DaemonConfig& config,
                    const Shard& shard, bool strict_state,
                    std::vector<std::unique_ptr<pipeline::Pipeline>>* pipelines,
                    uint64_t* journal_segment) {
  const std::string dir = store.dir().string();
  for (const auto& name : store.IgnoredNames()) {
    spdlog::warn("state directory {}: ignoring {}: not a snapshot generation in [1, {}]", dir, name,
                 kMaxSnapshotGeneration);
  }
  const RestoreOutcome restored = RestoreNewestGood(store, config, shard, pipelines);
  for (const auto& why : restored.skipped) spdlog::error("snapshot not used: {}", why);
  if (restored.path.empty() && !restored.unusable.empty() && strict_state) {
    spdlog::error(
        "no snapshot in {} could be restored ({} files, listed above): refusing to "
        "start (--strict-state); nothing was changed",
        dir, restored.unusable.size());
    return false;
  }
  for (const auto& path : restored.unusable) {
    std::filesystem::path moved_to;
    std::string error;
    if (store.MoveAside(path, &moved_to, &error)) {
      spdlog::error("snapshot {} kept as {}", path.string(), moved_to.string());
    } else {
      spdlog::error("snapshot {} could not be moved aside (it may be pruned later): {}",
                    path.string(), error);
    }
  }
  for (const auto& name : restored.reset_channels) {
    spdlog::warn("channel \"{}\" restarts from its rule: its spec changed since the snapshot",
                 name);
  }
  for (const auto& why : restored.not_restored) {
    spdlog::error("snapshot channel not restored, it restarts from its rule: {}", why);
  }
  *journal_segment = restored.journal_segment;
  if (!restored.path.empty()) {
    spdlog::info("restored {} channels from {}{}", restored.channels, restored.path,
                 restored.other_shard ? " (" + std::to_string(restored.other_shard) +
                                            " channels of other shards ignored)"
                                      : std::string());
  } else if (!restored.unusable.empty()) {
    spdlog::error(
        "no snapshot could be restored from {}: starting empty; the {} unusable files "
        "are kept in {}/{} (start with --strict-state to refuse instead)",
        dir, restored.unusable.size(), dir, kDamagedSubdirectory);
  } else {
    spdlog::info("no snapshot in {}: starting empty", dir);
  }
  return true;
}

}  // namespace bayline::server
