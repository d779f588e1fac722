#include "daemon/server/worker.h"

#include <pthread.h>

namespace bayline::server {

Worker::Worker(int index, std::unique_ptr<pipeline::Pipeline> pipeline, Publisher& publisher,
               size_t queue_capacity)
    : index_(index), pipeline_(std::move(pipeline)), sink_(publisher), queue_(queue_capacity) {}

Worker::~Worker() { Stop(); }

void Worker::Start() {
  thread_ = std::thread([this] {
    const std::string name = "bl-worker-" + std::to_string(index_);
    pthread_setname_np(pthread_self(), name.c_str());
    Run();
  });
}

void Worker::Stop() {
  if (stopped_) return;
  stopped_ = true;
  if (thread_.joinable()) {
    Item item;
    item.stop = true;
    queue_.Push(std::move(item));
    thread_.join();
  }
}

std::unique_ptr<IngestBatch> Worker::TakeEmptyBatch() {
  {
    std::lock_guard lock(free_mutex_);
    if (!free_batches_.empty()) {
      auto batch = std::move(free_batches_.back());
      free_batches_.pop_back();
      return batch;
    }
  }
  return std::make_unique<IngestBatch>();
}

void Worker::Submit(std::unique_ptr<IngestBatch> batch) {
  Item item;
  item.batch = std::move(batch);
  queue_.Push(std::move(item));
}

void Worker::Post(Task task) {
  Item item;
  item.task = std::move(task);
  queue_.Push(std::move(item));
}

void Worker::PostFrameRejection(std::string reason, std::string detail, int64_t arrival_ns) {
  Item item;
  item.rejection = std::make_unique<FrameRejection>(
      FrameRejection{std::move(reason), std::move(detail), arrival_ns});
  queue_.Push(std::move(item));
}

void Worker::Recycle(std::unique_ptr<IngestBatch> batch) {
  batch->Clear();
  std::lock_guard lock(free_mutex_);
  free_batches_.push_back(std::move(batch));
}

void Worker::ProcessBatch(const IngestBatch& batch) {
  // Decode the whole batch into reused messages, then let the pipeline process it in one call
  // (pipeline::Pipeline::ProcessBatch looks up the next observations' channels ahead).
  auto* observations = decoded_.mutable_observations();
  observations->Clear();  // keeps the cleared messages, and their buffers, for reuse
  arrival_ns_.clear();
  channel_hashes_.clear();
  bool decoded = true;
  for (size_t i = 0; i < batch.size() && decoded; ++i) {
    const std::string_view bytes = batch.At(i);
    decoded = observations->Add()->ParseFromArray(bytes.data(), int(bytes.size()));
    arrival_ns_.push_back(batch.entries[i].arrival_ns);
    channel_hashes_.push_back(batch.entries[i].channel_hash);
  }
  if (decoded) {
    // The ingest thread hashed the names to route them (frame_scan.h reads the very name that
    // protobuf decodes), so the pipeline does not hash them again.
    pipeline_->ProcessBatch(*observations, arrival_ns_, channel_hashes_, sink_);
    return;
  }
  // Not expected (ingest hands over only observations that decode): one at a time, refusing the
  // ones that do not decode.
  for (size_t i = 0; i < batch.size(); ++i) {
    const std::string_view bytes = batch.At(i);
    const int64_t arrival_ns = batch.entries[i].arrival_ns;
    if (observation_.ParseFromArray(bytes.data(), int(bytes.size()))) {
      pipeline_->Process(observation_, arrival_ns, sink_);
    } else {
      pipeline_->RejectFrame("malformed_frame",
                             "observation of " + std::to_string(bytes.size()) +
                                 " bytes is not a bayline.v1.Observation",
                             arrival_ns, sink_);
    }
  }
}

void Worker::Run() {
  for (;;) {
    Item item = queue_.Pop();
    if (item.batch) {
      ProcessBatch(*item.batch);
      Recycle(std::move(item.batch));
    }
    if (item.rejection) {
      pipeline_->RejectFrame(item.rejection->reason, item.rejection->detail,
                             item.rejection->arrival_ns, sink_);
    }
    if (item.task) item.task(*pipeline_);
    sink_.Flush();  // before the next wait
    if (item.stop) break;
  }
  sink_.FlushLog();
}

}  // namespace bayline::server
