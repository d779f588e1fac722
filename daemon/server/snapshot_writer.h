// SnapshotWriter: finishes snapshots on a thread of its own, one at a time, so that the
// supervisor keeps answering control requests while a large snapshot is assembled, serialized,
// written and fsynced (seconds at millions of channels).
//
// The supervisor makes the cut (Ingest::RunAtFrameBoundary + PostSnapshotCapture) and hands the
// capture to Start; the writer thread waits for the workers' copies, writes the file
// (WriteCapturedSnapshot) and removes the journal segments the file covers. The supervisor polls
// TakeResult from its loop (or blocks in Wait at shutdown) and answers whoever asked.
// Only one write runs at a time: Start while busy() is a programmer error.
// Thread safety: every member function from the supervisor thread only.
#pragma once

#include <atomic>
#include <cstdint>
#include <optional>
#include <string>
#include <thread>

#include "bayline/v1/config.pb.h"
#include "bayline/v1/control.pb.h"
#include "daemon/server/persistence.h"
#include "daemon/server/snapshot_file.h"

namespace bayline::server {

struct SnapshotResult {
  bool ok = false;
  bayline::v1::SnapshotInfo info;  // when ok
  std::string error;               // when not ok: what was not saved and why
};

class SnapshotWriter {
 public:
  // `store` must outlive the writer.
  explicit SnapshotWriter(SnapshotStore& store) : store_(store) {}
  ~SnapshotWriter();  // waits for a write in progress
  SnapshotWriter(const SnapshotWriter&) = delete;
  SnapshotWriter& operator=(const SnapshotWriter&) = delete;

  // Starts writing `capture` as the snapshot of `config` (copied: a reload may replace the
  // daemon's while the write runs) covering the journal segments below `journal_segment`.
  void Start(SnapshotCapture capture, const bayline::v1::DaemonConfig& config,
             uint64_t journal_segment);
  // A write started and not yet taken.
  bool busy() const { return thread_.joinable(); }
  // The result of the write once it has ended (then busy() is false); nullopt while it runs or
  // when none was started.
  std::optional<SnapshotResult> TakeResult();
  // Waits for the write in progress and returns its result; nullopt when none was started.
  std::optional<SnapshotResult> Wait();

 private:
  SnapshotStore& store_;
  std::thread thread_;
  std::atomic<bool> done_{false};
  SnapshotResult result_;  // written by the thread before done_, read after it
};

}  // namespace bayline::server
