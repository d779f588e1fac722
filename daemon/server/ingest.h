// The ingest thread: receives IngestFrames on PULL (bound) and SUB (connected, subscribed to
// everything) sockets, splits them into observations (frame_scan.h: the observations stay
// serialized; only their channel names are read), drops channels of other shards, and routes each
// observation to its worker in per-worker batches; the workers decode them.
//
// Frames: a message's last part is the IngestFrame (earlier parts, e.g. a producer's PUB topic,
// are ignored). A frame over max_frame_bytes is refused as "oversized_frame" without decoding; one
// that does not decode, or holds neither an observation nor a batch, as "malformed_frame". Both
// are handed to worker 0, whose pipeline publishes the InputError and counts it.
//
// Routing (routing.h): h = pipeline::ChannelHash(channel); the daemon keeps the observations with
// InShard(h, shard) and sends each to worker WorkerOf(h, shard, workers). A batch is handed over
// when it reaches kMaxBatch observations or kMaxBatchBytes (which bounds the memory a queue of
// large observations holds), or when no more frames are waiting, so latency stays low at low
// rates. Ingest never estimates: every observation is processed on the worker thread that owns
// its channel.
//
// Lifetime: construct and Bind() in the supervisor thread -> Start() -> Stop() (hands over what it
// holds, then joins). Counters may be read from any thread.
#pragma once

#include <zmq.hpp>

#include <atomic>
#include <memory>
#include <string>
#include <string_view>
#include <thread>
#include <vector>

#include "bayline/v1/observation.pb.h"
#include "daemon/server/daemon_options.h"
#include "daemon/server/frame_scan.h"
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

  Ingest(zmq::context_t& context, std::vector<Worker*> workers, Shard shard,
         uint32_t max_frame_bytes);
  ~Ingest();
  Ingest(const Ingest&) = delete;
  Ingest& operator=(const Ingest&) = delete;

  // Binds/connects every endpoint. False with *error naming the endpoint on failure. On success
  // *bound holds the resolved endpoints (a "*" port replaced by the one chosen).
  bool Bind(const IngestEndpoints& endpoints, std::vector<std::string>* bound, std::string* error);

  void Start();
  void Stop();

  // Reload may change the frame limit while running.
  void set_max_frame_bytes(uint32_t bytes) { max_frame_bytes_.store(bytes); }

  uint64_t frames_received() const { return frames_received_.load(std::memory_order_relaxed); }
  // Observations of this daemon's shard handed to workers.
  uint64_t observations_received() const {
    return observations_received_.load(std::memory_order_relaxed);
  }
  uint64_t observations_other_shard() const {
    return other_shard_.load(std::memory_order_relaxed);
  }

 private:
  void Run();
  // Receives and handles one message if one is waiting; false when none was.
  bool HandleMessage(zmq::socket_t& socket);
  void HandleFrame(const zmq::message_t& frame, int64_t arrival_ns);
  void Route(std::string_view channel, std::string_view observation, int64_t arrival_ns);
  void RouteDecoded(const bayline::v1::Observation& observation, int64_t arrival_ns);
  void Reject(const char* reason, std::string detail, int64_t arrival_ns);
  void Flush(size_t worker);
  void FlushAll();

  zmq::context_t& context_;
  std::vector<Worker*> workers_;
  Shard shard_;
  std::atomic<uint32_t> max_frame_bytes_;
  std::vector<zmq::socket_t> sockets_;  // PULL and SUB ingest sockets
  int stop_fd_;  // eventfd: Stop() wakes the ingest thread's poll
  std::atomic<bool> stopping_{false};
  std::thread thread_;

  // Owned by the ingest thread.
  std::vector<ScannedObservation> scanned_;
  bayline::v1::IngestFrame frame_;  // frames the scanner leaves to protobuf
  std::string encoded_;
  std::vector<std::unique_ptr<IngestBatch>> pending_;  // one per worker
  RateLimitedLog log_;

  std::atomic<uint64_t> frames_received_{0};
  std::atomic<uint64_t> observations_received_{0};
  std::atomic<uint64_t> other_shard_{0};
};

}  // namespace bayline::server
