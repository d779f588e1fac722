// A worker thread: owns one pipeline::Pipeline (holding the channels routed to it, routing.h)
// exclusively and is
// reached only by message passing through its bounded WorkQueue:
//   * observation batches from the ingest thread (processed in order, so per-channel order holds),
//     in the queue's ordered lane, bounded by count and by bytes (backpressure to ingest);
//   * tasks from the supervisor thread: Call (control requests, snapshots, reload) uses the urgent
//     lane, so it runs after the batch in progress and before the queued ones: a control request
//     waits for at most one batch (<= Ingest::kMaxBatch observations), however full the queue.
//     Post and Drain are ordered (after everything queued). Either way a task runs on the worker's
//     own thread between batches, so no two threads ever touch the pipeline at once.
// The pipeline's counters are copied out after every item (counters()), so `stats` never waits
// for a worker.
// Publications are collected while an item is processed and sent on the shared PUB socket
// (Publisher) when it is done, before the worker can block again. The input errors of one ingest
// frame are bounded (FrameErrorLimit: the first 16 published, then one summary per frame).
//
// Memory: the queued batches hold at most queue_bytes + one batch; at most kKeptFreeBatches
// emptied batches are kept for reuse, each with at most kKeptBatchCapacity bytes of buffer.
//
// Lifetime: construct (in the supervisor thread) -> Start() -> ... -> Stop() (drains the queue,
// then joins). Submit/Call after Stop are programmer errors.
#pragma once

#include <atomic>
#include <cstdint>
#include <functional>
#include <future>
#include <memory>
#include <mutex>
#include <string>
#include <string_view>
#include <thread>
#include <type_traits>
#include <vector>

#include "bayline/v1/observation.pb.h"
#include "daemon/pipeline/counters.h"
#include "daemon/pipeline/pipeline.h"
#include "daemon/server/frame_error_limit.h"
#include "daemon/server/publication_sink.h"
#include "daemon/server/publisher.h"
#include "daemon/server/work_queue.h"

namespace bayline::server {

// Observations bound for one worker, still serialized (each a bayline.v1.Observation), with
// their arrival times (ns since the epoch). The worker decodes them, so decoding runs on every
// worker in parallel rather than on the one ingest thread. Reused: the worker clears a processed
// batch and hands it back for the ingest thread to refill, keeping its buffers' capacity.
struct IngestBatch {
  struct Entry {
    uint32_t offset = 0;  // into bytes
    uint32_t size = 0;
    int64_t arrival_ns = 0;
    uint64_t channel_hash = 0;  // pipeline::ChannelHash of the observation's channel name
    uint64_t frame = 0;         // the ingest frame it came in (numbered from 1 by ingest)
    bool frame_end = false;     // the frame's last observation for this worker
  };
  std::string bytes;
  std::vector<Entry> entries;

  void Add(std::string_view observation, int64_t arrival_ns, uint64_t channel_hash,
           uint64_t frame) {
    entries.push_back({uint32_t(bytes.size()), uint32_t(observation.size()), arrival_ns,
                       channel_hash, frame, false});
    bytes.append(observation);
  }
  std::string_view At(size_t i) const {
    return {bytes.data() + entries[i].offset, entries[i].size};
  }
  size_t size() const { return entries.size(); }
  void Clear() {
    bytes.clear();
    entries.clear();
  }
};

class Worker {
 public:
  using Task = std::function<void(pipeline::Pipeline&)>;

  static constexpr size_t kKeptFreeBatches = 8;
  static constexpr size_t kKeptBatchCapacity = size_t(2) << 20;

  // `publisher` (bound already) must outlive the worker. The queue holds at most queue_capacity
  // items and queue_bytes bytes of batches (plus one batch).
  Worker(int index, std::unique_ptr<pipeline::Pipeline> pipeline, Publisher& publisher,
         size_t queue_capacity, uint64_t queue_bytes = UINT64_MAX);
  ~Worker();
  Worker(const Worker&) = delete;
  Worker& operator=(const Worker&) = delete;

  void Start();
  // Processes everything already queued, then ends the thread. Idempotent.
  void Stop();

  // Ingest thread: an empty batch to fill (recycled when possible), and handing it over (blocks
  // while the queue is full, by count or by bytes).
  std::unique_ptr<IngestBatch> TakeEmptyBatch();
  void Submit(std::unique_ptr<IngestBatch> batch);

  // Runs `task` on the worker thread after everything queued before it; does not wait.
  void Post(Task task);
  // Runs `task` on the worker thread before the queued batches (after the one in progress); does
  // not wait.
  void PostUrgent(Task task);
  // Waits until everything queued before it has been processed.
  void Drain();

  // Ingest thread: a frame that could not be decoded, to be published and counted by this
  // worker's pipeline (pipeline::Pipeline::RejectFrame).
  void PostFrameRejection(std::string reason, std::string detail, int64_t arrival_ns);

  // Runs `fn(pipeline)` on the worker thread before the queued batches (after the one in
  // progress) and waits for its result. The counters are published (counters()) before it returns.
  template <typename Fn>
  auto Call(Fn fn) -> decltype(fn(std::declval<pipeline::Pipeline&>())) {
    using R = decltype(fn(std::declval<pipeline::Pipeline&>()));
    auto promise = std::make_shared<std::promise<R>>();
    auto result = promise->get_future();
    Item item;
    item.task = [this, fn = std::move(fn), promise](pipeline::Pipeline& p) mutable {
      if constexpr (std::is_void_v<R>) {
        fn(p);
        PublishCounters();
        promise->set_value();
      } else {
        R value = fn(p);
        PublishCounters();
        promise->set_value(std::move(value));
      }
    };
    queue_.PushUrgent(std::move(item));
    return result.get();
  }

  // The pipeline's counters as of the last item the worker finished (a batch, a task): any thread,
  // without waiting for the worker, so `stats` is answered while a worker is busy (a long batch, a
  // snapshot capture of many channels).
  pipeline::Counters counters() const {
    std::lock_guard lock(counters_mutex_);
    return counters_;
  }

  // Queued items (batches and tasks) not yet taken by the worker.
  size_t queue_depth() const { return queue_.size(); }
  int index() const { return index_; }

 private:
  struct FrameRejection {
    std::string reason;
    std::string detail;
    int64_t arrival_ns = 0;
  };
  struct Item {
    std::unique_ptr<IngestBatch> batch;
    Task task;
    std::unique_ptr<FrameRejection> rejection;
    bool stop = false;
  };
  void Run();
  // Decodes the batch and runs it through the pipeline (worker thread), frame by frame where a
  // frame's input errors may need limiting.
  void ProcessBatch(const IngestBatch& batch);
  // Entries [begin, end) of the batch, publishing to `sink`.
  void ProcessRange(const IngestBatch& batch, size_t begin, size_t end,
                    pipeline::PublicationSink& sink);
  void Recycle(std::unique_ptr<IngestBatch> batch);
  void PublishCounters();  // worker thread (or before Start): copies the pipeline's counters

  const int index_;
  std::unique_ptr<pipeline::Pipeline> pipeline_;
  // Used only by the worker thread.
  ZmqPublicationSink sink_;
  FrameErrorLimit frame_errors_{sink_};
  bayline::v1::ObservationBatch decoded_;  // decoding buffers
  std::vector<int64_t> arrival_ns_;
  std::vector<uint64_t> channel_hashes_;
  bayline::v1::Observation observation_;
  WorkQueue<Item> queue_;
  std::mutex free_mutex_;
  std::vector<std::unique_ptr<IngestBatch>> free_batches_;
  std::thread thread_;
  bool stopped_ = false;
  mutable std::mutex counters_mutex_;
  pipeline::Counters counters_;  // guarded by counters_mutex_
};

}  // namespace bayline::server
