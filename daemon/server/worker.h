// A worker thread: owns one pipeline::Pipeline (holding the channels routed to it, routing.h)
// exclusively and is reached only by message passing through its bounded WorkQueue:
//   * observation batches from the ingest thread (processed in order, so per-channel order holds);
//   * tasks from the supervisor thread (control requests, snapshots, reload), run on the worker's
//     own thread between batches, so no two threads ever touch the pipeline at once.
// Publications are collected while an item is processed and sent on the shared PUB socket
// (Publisher) when it is done, before the worker can block again.
//
// Lifetime: construct (in the supervisor thread) -> Start() -> ... -> Stop() (drains the queue,
// then joins). Submit/Call after Stop are programmer errors.
#pragma once

#include <atomic>
#include <functional>
#include <future>
#include <memory>
#include <mutex>
#include <string>
#include <string_view>
#include <thread>
#include <vector>

#include "bayline/v1/observation.pb.h"
#include "daemon/pipeline/pipeline.h"
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
  };
  std::string bytes;
  std::vector<Entry> entries;

  void Add(std::string_view observation, int64_t arrival_ns, uint64_t channel_hash) {
    entries.push_back(
        {uint32_t(bytes.size()), uint32_t(observation.size()), arrival_ns, channel_hash});
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

  // `publisher` (bound already) must outlive the worker.
  Worker(int index, std::unique_ptr<pipeline::Pipeline> pipeline, Publisher& publisher,
         size_t queue_capacity);
  ~Worker();
  Worker(const Worker&) = delete;
  Worker& operator=(const Worker&) = delete;

  void Start();
  // Processes everything already queued, then ends the thread. Idempotent.
  void Stop();

  // Ingest thread: an empty batch to fill (recycled when possible), and handing it over (blocks
  // while the queue is full).
  std::unique_ptr<IngestBatch> TakeEmptyBatch();
  void Submit(std::unique_ptr<IngestBatch> batch);

  // Runs `task` on the worker thread after everything queued before it; does not wait.
  void Post(Task task);

  // Ingest thread: a frame that could not be decoded, to be published and counted by this
  // worker's pipeline (pipeline::Pipeline::RejectFrame).
  void PostFrameRejection(std::string reason, std::string detail, int64_t arrival_ns);

  // Runs `fn(pipeline)` on the worker thread and waits for its result.
  template <typename Fn>
  auto Call(Fn fn) -> decltype(fn(std::declval<pipeline::Pipeline&>())) {
    using R = decltype(fn(std::declval<pipeline::Pipeline&>()));
    auto task = std::make_shared<std::packaged_task<R(pipeline::Pipeline&)>>(std::move(fn));
    auto result = task->get_future();
    Post([task](pipeline::Pipeline& p) { (*task)(p); });
    return result.get();
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
  // Decodes the batch and runs it through the pipeline (worker thread).
  void ProcessBatch(const IngestBatch& batch);
  void Recycle(std::unique_ptr<IngestBatch> batch);

  const int index_;
  std::unique_ptr<pipeline::Pipeline> pipeline_;
  // Used only by the worker thread.
  ZmqPublicationSink sink_;
  bayline::v1::ObservationBatch decoded_;  // decoding buffers
  std::vector<int64_t> arrival_ns_;
  std::vector<uint64_t> channel_hashes_;
  bayline::v1::Observation observation_;
  WorkQueue<Item> queue_;
  std::mutex free_mutex_;
  std::vector<std::unique_ptr<IngestBatch>> free_batches_;
  std::thread thread_;
  bool stopped_ = false;
};

}  // namespace bayline::server
