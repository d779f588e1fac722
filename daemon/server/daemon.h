// Daemon: assembles and runs baylined.
//
// Threads: the supervisor (the thread calling Run: control socket, signals, periodic snapshots,
// reload), one ingest thread, N worker threads each owning one pipeline partition and sending its
// publications on the shared PUB socket (Publisher), and a snapshot writer (SnapshotWriter) while
// a snapshot is being written: the supervisor only makes the cut, so control requests are answered
// during the write, and a `snapshot` request is answered when its file is written. Requests that
// come while a write runs are answered by the next snapshot, started as soon as it ends. Start-up
// order: signals blocked -> configuration -> state restored into the pipelines -> sockets bound
// (any failure: exit 1 before a thread starts) -> threads started -> "ready" log line with every
// resolved endpoint. With a journal (journal.h), the segments the restored snapshot does not cover
// are replayed through the ingest path after the workers start and before ingest does, and applied
// before the "ready" line; replayed frames publish again. Snapshots are taken at a frame boundary
// of the ingest thread, which also starts the next journal segment there, so a snapshot holds
// exactly the segments before it. Stop (SIGTERM / SIGINT): ingest stops and hands over what it
// holds, the workers drain their queues and send their last publications, a snapshot is written,
// the threads end, the PUB socket lingers (up to 1 s) until connected subscribers have them, exit 0
// (kExitFinalSnapshotFailed when the final snapshot could not be written: the state since the last
// snapshot is lost). A second SIGTERM / SIGINT before that ends the process at once with 128 + the
// signal's number (signals.h).
#pragma once

#include <chrono>
#include <memory>
#include <string>
#include <vector>
#include <zmq.hpp>

#include "bayline/v1/config.pb.h"
#include "daemon/server/control_service.h"
#include "daemon/server/daemon_options.h"
#include "daemon/server/ingest.h"
#include "daemon/server/journal.h"
#include "daemon/server/publisher.h"
#include "daemon/server/rate_limited_log.h"
#include "daemon/server/signals.h"
#include "daemon/server/snapshot_file.h"
#include "daemon/server/snapshot_writer.h"
#include "daemon/server/worker.h"

namespace bayline::server {

class Daemon : public DaemonActions {
 public:
  explicit Daemon(DaemonOptions options);
  ~Daemon() override;

  // Runs until SIGTERM/SIGINT. Returns the process exit code.
  int Run();

  void RequestSnapshot(SnapshotDone done) override;
  bool Reload(std::string* message) override;
  uint64_t snapshots_written() const override { return snapshots_written_; }

 private:
  bool Start();     // everything up to the threads running; false: logged, exit 1
  void Serve();     // the supervisor loop
  bool Shutdown();  // false: the final snapshot failed (logged)
  // Logs and ends the process at once (SignalWatcher::ForcedExitCode): a second SIGTERM/SIGINT.
  [[noreturn]] static void ForcedExit(int signal);
  void HandleControl();
  // Sends `reply` to the peer the ROUTER `envelope` (routing id ... empty delimiter) names; a peer
  // that has gone is skipped by ZeroMQ.
  void SendControlReply(const std::vector<std::string>& envelope, bayline::v1::Reply reply);
  // (Re)creates the control socket bound to `endpoint`; sets control_endpoint_ to the resolved one.
  bool BindControl(const std::string& endpoint, std::string* error);
  void ApplyRuntimeSettings();
  // Start-up, workers running, ingest not yet: replays the journal segments from `covered` on
  // (those the restored snapshot does not hold), then opens the next segment when the journal is
  // on.
  bool ReplayJournal(uint64_t covered, std::string* error);
  // Takes a snapshot at an ingest frame boundary (rotating the journal there) and hands it to the
  // writer, which writes it and removes the journal segments it covers. `prompt` without a
  // journal: the workers copy their channels before their queued batches (persistence.h). False
  // (error set) when the journal could not be rotated; nothing was started. Not while busy.
  bool StartSnapshot(bool prompt, std::string* error);
  // A write that has ended: logged, counted, and answered to everyone waiting for it; then the
  // snapshot asked for during it, if any, starts.
  void PollSnapshotWriter();
  void FinishSnapshot(const SnapshotResult& result);

  DaemonOptions options_;
  SignalWatcher signals_;  // first member: blocks signals before any thread exists
  bayline::v1::DaemonConfig config_;
  Shard shard_;
  std::unique_ptr<SnapshotStore> store_;
  zmq::context_t context_;
  std::unique_ptr<Publisher> publisher_;
  std::vector<std::unique_ptr<Worker>> workers_;
  std::unique_ptr<Ingest> ingest_;
  uint64_t control_message_bytes_ = 0;      // ZMQ_MAXMSGSIZE of the control socket
  std::unique_ptr<JournalWriter> journal_;  // null when the journal is off
  uint64_t journal_next_segment_ = 0;       // first segment no snapshot covers yet
  std::unique_ptr<zmq::socket_t> control_;
  std::string control_endpoint_;  // resolved (a port of 0 or `*` made concrete)
  RateLimitedLog control_log_;
  std::unique_ptr<ControlService> control_service_;
  std::unique_ptr<SnapshotWriter> snapshot_writer_;
  std::vector<SnapshotDone> snapshot_waiting_;  // answered by the write in progress
  std::vector<SnapshotDone> snapshot_next_;     // asked during it: answered by the next one
  uint64_t snapshots_written_ = 0;
  std::chrono::steady_clock::duration snapshot_period_{};
  std::chrono::steady_clock::time_point next_snapshot_{};
  bool stop_requested_ = false;
};

}  // namespace bayline::server
