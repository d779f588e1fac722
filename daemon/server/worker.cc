#include "daemon/server/worker.h"

#include <pthread.h>

namespace bayline::server {

Worker::Worker(int index, std::unique_ptr<pipeline::Pipeline> pipeline, Publisher& publisher,
               size_t queue_capacity, uint64_t queue_bytes)
    : index_(index),
      pipeline_(std::move(pipeline)),
      sink_(publisher),
      queue_(queue_capacity, queue_bytes) {}

Worker::~Worker() { Stop(); }

void Worker::Start() {
  PublishCounters();  // what a restore put into the pipeline
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
  const uint64_t bytes = batch->bytes.size();
  Item item;
  item.batch = std::move(batch);
  queue_.Push(std::move(item), bytes);
}

void Worker::Post(Task task) {
  Item item;
  item.task = std::move(task);
  queue_.Push(std::move(item));
}

void Worker::PostUrgent(Task task) {
  Item item;
  item.task = std::move(task);
  queue_.PushUrgent(std::move(item));
}

void Worker::Drain() {
  std::promise<void> done;
  std::future<void> drained = done.get_future();
  Post([this, &done](pipeline::Pipeline&) {
    PublishCounters();
    done.set_value();
  });
  drained.wait();
}

void Worker::PublishCounters() {
  std::lock_guard lock(counters_mutex_);
  counters_ = pipeline_->counters();
}

void Worker::PostFrameRejection(std::string reason, std::string detail, int64_t arrival_ns) {
  Item item;
  item.rejection = std::make_unique<FrameRejection>(
      FrameRejection{std::move(reason), std::move(detail), arrival_ns});
  queue_.Push(std::move(item));
}

void Worker::Recycle(std::unique_ptr<IngestBatch> batch) {
  batch->Clear();
  if (batch->bytes.capacity() > kKeptBatchCapacity) std::string().swap(batch->bytes);
  std::lock_guard lock(free_mutex_);
  if (free_batches_.size() < kKeptFreeBatches) free_batches_.push_back(std::move(batch));
}

namespace {

// End of the run of entries from begin on that came in the same frame.
size_t FrameRunEnd(const IngestBatch& batch, size_t begin) {
  size_t end = begin + 1;
  while (end < batch.size() && batch.entries[end].frame == batch.entries[begin].frame) ++end;
  return end;
}

// A run that is a frame's whole share for this worker (not continued from an earlier batch nor
// into a later one) and too short to exceed the input-error bound.
bool WholeShortFrame(const IngestBatch& batch, size_t begin, size_t end,
                     const FrameErrorLimit& limit) {
  const bool continued = limit.open() && limit.frame() == batch.entries[begin].frame;
  return !continued && batch.entries[end - 1].frame_end &&
         end - begin <= FrameErrorLimit::kIndividual;
}

}  // namespace

void Worker::ProcessBatch(const IngestBatch& batch) {
  // Frames too short to exceed the input-error bound (the usual single observations and small
  // batches) go to the pipeline together, unlimited; a longer frame goes on its own, limited.
  size_t begin = 0;
  while (begin < batch.size()) {
    size_t end = FrameRunEnd(batch, begin);
    if (WholeShortFrame(batch, begin, end, frame_errors_)) {
      while (end < batch.size()) {
        const size_t next = FrameRunEnd(batch, end);
        if (!WholeShortFrame(batch, end, next, frame_errors_)) break;
        end = next;
      }
      frame_errors_.End();
      ProcessRange(batch, begin, end, sink_);
    } else {
      frame_errors_.Begin(batch.entries[begin].frame, batch.entries[begin].arrival_ns);
      ProcessRange(batch, begin, end, frame_errors_);
      if (batch.entries[end - 1].frame_end) frame_errors_.End();
    }
    begin = end;
  }
}

void Worker::ProcessRange(const IngestBatch& batch, size_t begin, size_t end,
                          pipeline::PublicationSink& sink) {
  // Decode the range into reused messages, then let the pipeline process it in one call
  // (pipeline::Pipeline::ProcessBatch looks up the next observations' channels ahead).
  auto* observations = decoded_.mutable_observations();
  observations->Clear();  // keeps the cleared messages, and their buffers, for reuse
  arrival_ns_.clear();
  channel_hashes_.clear();
  bool decoded = true;
  for (size_t i = begin; i < end && decoded; ++i) {
    const std::string_view bytes = batch.At(i);
    decoded = observations->Add()->ParseFromArray(bytes.data(), int(bytes.size()));
    arrival_ns_.push_back(batch.entries[i].arrival_ns);
    channel_hashes_.push_back(batch.entries[i].channel_hash);
  }
  if (decoded) {
    // The ingest thread hashed the names to route them (frame_scan.h reads the very name that
    // protobuf decodes), so the pipeline does not hash them again.
    pipeline_->ProcessBatch(*observations, arrival_ns_, channel_hashes_, sink);
    return;
  }
  // Not expected (ingest hands over only observations that decode): one at a time, refusing the
  // ones that do not decode.
  for (size_t i = begin; i < end; ++i) {
    const std::string_view bytes = batch.At(i);
    const int64_t arrival_ns = batch.entries[i].arrival_ns;
    if (observation_.ParseFromArray(bytes.data(), int(bytes.size()))) {
      pipeline_->Process(observation_, arrival_ns, sink);
    } else {
      pipeline_->RejectFrame("malformed_frame",
                             "observation of " + std::to_string(bytes.size()) +
                                 " bytes is not a bayline.v1.Observation",
                             arrival_ns, sink);
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
    PublishCounters();
    sink_.Flush();  // before the next wait
    if (item.stop) break;
  }
  sink_.FlushLog();
}

}  // namespace bayline::server
