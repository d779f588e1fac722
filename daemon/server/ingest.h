// The ingest thread: receives IngestFrames on PULL (bound) and SUB (connected, subscribed to
// everything) sockets, splits them into observations (frame_scan.h: the observations stay
// serialized; only their channel names are read), drops channels of other shards, and routes each
// observation to its worker in per-worker batches; the workers decode them.
//
// Frames: a message's last part is the IngestFrame (earlier parts, e.g. a producer's PUB topic,
// are ignored). ZeroMQ refuses a message part larger than the ingest message size (ZMQ_MAXMSGSIZE)
// by dropping the producer's connection, and queues at most the ingest receive count of messages
// per connected producer (ZMQ_RCVHWM): pipeline/resource_limits.h. A frame over max_frame_bytes
// is refused as "oversized_frame" without decoding; one that does not decode, or holds neither an
// observation nor a batch, as "malformed_frame". Both are handed to worker 0, whose pipeline
// publishes the InputError and counts it.
//
// Routing (routing.h): h = pipeline::ChannelHash(channel); the daemon keeps the observations with
// InShard(h, shard) and sends each to worker WorkerOf(h, shard, workers). A batch is handed over
// when it has kMaxBatch observations or kMaxBatchBytes and another observation comes for it, or
// when no more frames are waiting, so latency stays low at low rates; the workers' queues bound the
// bytes queued (Worker). Each entry carries its frame's number, and the last entry of a frame for
// each worker is marked (the worker bounds a frame's input errors). Ingest never estimates: every
// observation is processed on the worker thread that owns its channel.
//
// Journal (journal.h): when set, every frame within the size limit is appended to the journal
// before its observations are routed; a frame the journal cannot take is refused
// ("journal_failed").
//
// Lifetime: construct and Bind() in the supervisor thread -> (ReplayFrame()... FlushReplayed())
// -> Start() -> Stop() (hands over what it holds, then joins). Counters may be read from any
// thread.
#pragma once

#include <atomic>
#include <condition_variable>
#include <functional>
#include <memory>
#include <mutex>
#include <string>
#include <string_view>
#include <thread>
#include <vector>
#include <zmq.hpp>

#include "bayline/v1/observation.pb.h"
#include "daemon/server/daemon_options.h"
#include "daemon/server/frame_scan.h"
#include "daemon/server/journal.h"
#include "daemon/server/rate_limited_log.h"
#include "daemon/server/worker.h"

namespace bayline::server {

struct IngestEndpoints {
  std::vector<std::string> pull_bind;
  std::vector<std::string> sub_connect;
};

class Ingest {
 public:
  static constexpr size_t kMaxBatch = 512;
  static constexpr size_t kMaxBatchBytes = size_t(1) << 20;

  // ingest_message_bytes and ingest_receive_messages: pipeline::ResourceLimits.
  Ingest(zmq::context_t& context, std::vector<Worker*> workers, Shard shard,
         uint32_t max_frame_bytes, uint32_t ingest_message_bytes = UINT32_MAX,
         int ingest_receive_messages = 100000);
  ~Ingest();
  Ingest(const Ingest&) = delete;
  Ingest& operator=(const Ingest&) = delete;

  // Binds/connects every endpoint. False with *error naming the endpoint on failure. On success
  // *bound holds the resolved endpoints (a "*" port replaced by the one chosen).
  bool Bind(const IngestEndpoints& endpoints, std::vector<std::string>* bound, std::string* error);

  // Before Start(): the journal the ingest thread appends to (not owned; may be null).
  void set_journal(JournalWriter* journal) { journal_ = journal; }

  // Before Start(), supervisor thread: handles a frame read back from the journal exactly as a
  // received one (same routing, same rejections), without journaling it again.
  void ReplayFrame(std::string_view frame, int64_t arrival_ns);
  // Hands over the batches ReplayFrame filled.
  void FlushReplayed() { FlushAll(); }

  void Start();
  void Stop();

  // Runs `task` on the ingest thread between two frames, after every observation received so far
  // has been handed to its worker, and returns once it ran. Whatever `task` posts to the workers
  // is therefore ordered after every earlier frame and before every later one (a consistent cut,
  // used by snapshots). Before Start() or after Stop(): hands over, then runs `task` here.
  void RunAtFrameBoundary(const std::function<void()>& task);

  // Reload may change the frame limit while running.
  void set_max_frame_bytes(uint32_t bytes) { max_frame_bytes_.store(bytes); }

  uint64_t frames_received() const { return frames_received_.load(std::memory_order_relaxed); }
  // Observations of this daemon's shard handed to workers.
  uint64_t observations_received() const {
    return observations_received_.load(std::memory_order_relaxed);
  }
  uint64_t observations_other_shard() const { return other_shard_.load(std::memory_order_relaxed); }

 private:
  void Run();
  // Receives and handles one message if one is waiting; false when none was.
  bool HandleMessage(zmq::socket_t& socket);
  void HandleFrame(std::string_view frame, int64_t arrival_ns, bool journal);
  void RunBoundaryTask();  // ingest thread: a pending RunAtFrameBoundary task, if any
  void Wake();
  void Route(std::string_view channel, std::string_view observation, int64_t arrival_ns);
  void RouteDecoded(const bayline::v1::Observation& observation, int64_t arrival_ns);
  void Reject(const char* reason, std::string detail, int64_t arrival_ns);
  void MarkFrameEnds();
  void Flush(size_t worker);
  void FlushAll();

  zmq::context_t& context_;
  std::vector<Worker*> workers_;
  Shard shard_;
  std::atomic<uint32_t> max_frame_bytes_;
  const uint32_t ingest_message_bytes_;
  const int ingest_receive_messages_;
  std::vector<zmq::socket_t> sockets_;  // PULL and SUB ingest sockets
  int wake_fd_;  // eventfd: Stop() and RunAtFrameBoundary() wake the ingest thread's poll
  std::atomic<bool> stopping_{false};
  std::thread thread_;

  // RunAtFrameBoundary's hand-off.
  std::mutex boundary_mutex_;
  std::condition_variable boundary_done_;
  const std::function<void()>* boundary_task_ = nullptr;  // guarded by boundary_mutex_
  std::atomic<bool> boundary_requested_{false};

  // Owned by the ingest thread.
  JournalWriter* journal_ = nullptr;
  std::string journal_error_;
  std::vector<ScannedObservation> scanned_;
  bayline::v1::IngestFrame frame_;  // frames the scanner leaves to protobuf
  std::string encoded_;
  std::vector<std::unique_ptr<IngestBatch>> pending_;  // one per worker
  uint64_t frame_number_ = 0;                          // of the frame being routed
  RateLimitedLog log_;

  std::atomic<uint64_t> frames_received_{0};
  std::atomic<uint64_t> observations_received_{0};
  std::atomic<uint64_t> other_shard_{0};
};

}  // namespace bayline::server
