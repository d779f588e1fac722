#include "daemon/server/snapshot_writer.h"

#include <pthread.h>
#include <spdlog/spdlog.h>

#include "daemon/server/journal.h"

namespace bayline::server {

SnapshotWriter::~SnapshotWriter() { Wait(); }

void SnapshotWriter::Start(SnapshotCapture capture, const bayline::v1::DaemonConfig& config,
                           uint64_t journal_segment) {
  done_.store(false, std::memory_order_relaxed);
  thread_ = std::thread([this, capture = std::move(capture), config, journal_segment]() mutable {
    pthread_setname_np(pthread_self(), "bl-snapshot");
    SnapshotResult result;
    result.ok = WriteCapturedSnapshot(std::move(capture), store_, config, journal_segment,
                                      &result.info, &result.error);
    std::string remove_error;
    if (result.ok && !RemoveJournalSegmentsBelow(store_.dir(), journal_segment, &remove_error)) {
      spdlog::error("journal: {}", remove_error);
    }
    result_ = std::move(result);
    done_.store(true, std::memory_order_release);
  });
}

std::optional<SnapshotResult> SnapshotWriter::TakeResult() {
  if (!thread_.joinable() || !done_.load(std::memory_order_acquire)) return std::nullopt;
  return Wait();
}

std::optional<SnapshotResult> SnapshotWriter::Wait() {
  if (!thread_.joinable()) return std::nullopt;
  thread_.join();
  return std::move(result_);
}

}  // namespace bayline::server
