// The control API: turns one bayline.v1.Request into one bayline.v1.Reply.
//   list     ChannelList of every worker's channels matching the glob, sorted by name
//   ask      ChannelReport of one channel, from the worker that owns it
//   reset    forgets one channel (it restarts from its rule)
//   stats    counters summed over the workers, ingest counters, queue depths, rates, uptime
//   snapshot writes a snapshot now; SnapshotInfo, answered when the file is written (the
//            daemon answers other requests meanwhile; see DaemonActions::RequestSnapshot)
//   reload   re-reads the config file; message lists what changed
// Workers are asked by message passing (Worker::Call): nothing here touches a pipeline directly;
// stats reads the counters each worker copies out after every item (Worker::counters), so it is
// answered at once however busy the workers are.
// Errors (unknown channel, malformed request, failed snapshot or reload) are replies with
// ok = false and `error` set; the daemon keeps running and nothing changes. Requests refused before
// they reach an operation are counted by reason and reported by `stats`
// (control_rejected_by_reason).
// Thread safety: supervisor thread only.
#pragma once

#include <chrono>
#include <functional>
#include <map>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include "bayline/v1/control.pb.h"
#include "daemon/server/daemon_options.h"
#include "daemon/server/ingest.h"
#include "daemon/server/worker.h"

namespace bayline::server {

// What the control API asks of the daemon itself.
class DaemonActions {
 public:
  virtual ~DaemonActions() = default;
  // Called with the outcome once a snapshot taken after this request is written (or has failed:
  // `error` says what was not saved); may be called before returning, or later from the
  // supervisor's loop.
  using SnapshotDone =
      std::function<void(bool ok, const bayline::v1::SnapshotInfo& info, const std::string& error)>;
  virtual void RequestSnapshot(SnapshotDone done) = 0;
  // On success *message says what was applied; on failure *message is the error.
  virtual bool Reload(std::string* message) = 0;
  virtual uint64_t snapshots_written() const = 0;
};

class ControlService {
 public:
  ControlService(const std::vector<std::unique_ptr<Worker>>& workers, const Ingest& ingest,
                 Shard shard, DaemonActions& actions);

  // Receives the reply to one request; called exactly once, at once or (snapshot) later.
  using ReplyFn = std::function<void(bayline::v1::Reply)>;

  void Handle(const bayline::v1::Request& request, ReplyFn reply);
  // Decodes a request frame and handles it; a frame that does not decode gets an error reply
  // (counted as malformed_request).
  void HandleBytes(std::string_view bytes, ReplyFn reply);
  // The error reply to a request of `parts` > 1 message parts (counted as multipart_request).
  bayline::v1::Reply RejectMultipart(size_t parts);
  // Counts a request that failed on its socket (the daemon's own reasons, e.g. zmq_error).
  void CountRejected(const std::string& reason) { ++rejected_by_reason_[reason]; }

 private:
  bayline::v1::Reply HandleNow(const bayline::v1::Request& request);  // all but snapshot
  bayline::v1::Reply List(const std::string& glob);
  bayline::v1::Reply Ask(const std::string& channel);
  bayline::v1::Reply Reset(const std::string& channel);
  bayline::v1::Reply Stats();
  Worker* OwnerOf(std::string_view channel) const;  // nullptr: another shard's channel

  const std::vector<std::unique_ptr<Worker>>& workers_;
  const Ingest& ingest_;
  Shard shard_;
  DaemonActions& actions_;
  const std::chrono::steady_clock::time_point started_ = std::chrono::steady_clock::now();
  std::chrono::steady_clock::time_point last_stats_time_ = started_;
  uint64_t last_stats_observations_ = 0;
  std::map<std::string, uint64_t> rejected_by_reason_;
};

}  // namespace bayline::server
