// A worker thread: owns one pipeline::Pipeline (a partition of the channels) exclusively and is
// reached only by message passing through its bounded WorkQueue:
//   * observation batches from the ingest thread (processed in order, so per-channel order holds);
//   * tasks from the supervisor thread (control requests, snapshots, reload), run on the worker's
//     own thread between batches, so nothing touches the pipeline from another thread.
// Publications leave through the worker's own PUSH socket to the publisher thread.
//
// Lifetime: construct (in the supervisor thread) -> Start() -> ... -> Stop() (drains the queue,
// then joins). Submit/Call after Stop are programmer errors.
#pragma once

#include <zmq.hpp>

#include <atomic>
#include <functional>
#include <future>
#include <memory>
#include <mutex>
#include <string>
#include <thread>
#include <vector>

#include "bayline/v1/observation.pb.h"
#include "daemon/pipeline/pipeline.h"
#include "daemon/server/publication_sink.h"
#include "daemon/server/work_queue.h"

namespace bayline::server {

// Observations bound for one worker, with their arrival times (ns since the epoch). Reused: the
// worker clears a processed batch and hands it back for the ingest thread to refill, so protobuf
// keeps the strings and arrays it already allocated.
struct IngestBatch {
  bayline::v1::ObservationBatch batch;
  std::vector<int64_t> arrival_ns;
  size_t size() const { return arrival_ns.size(); }
};

class Worker {
 public:
  using Task = std::function<void(pipeline::Pipeline&)>;

  // `publisher_endpoint`: the publisher thread's inproc PULL endpoint (already bound).
  Worker(int index, std::unique_ptr<pipeline::Pipeline> pipeline, zmq::context_t& context,
         const std::string& publisher_endpoint, size_t queue_capacity);
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
  void Recycle(std::unique_ptr<IngestBatch> batch);

  const int index_;
  std::unique_ptr<pipeline::Pipeline> pipeline_;
  zmq::socket_t push_;
  ZmqPublicationSink sink_;  // used only on the worker thread
  WorkQueue<Item> queue_;
  std::mutex free_mutex_;
  std::vector<std::unique_ptr<IngestBatch>> free_batches_;
  std::thread thread_;
  bool stopped_ = false;
};

}  // namespace bayline::server
