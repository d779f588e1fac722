#include "daemon/server/worker.h"


namespace bayline::server {

Worker::Worker(int index, std::unique_ptr<pipeline::Pipeline> pipeline, zmq::context_t& context,
               const std::string& publisher_endpoint, size_t queue_capacity)
    : index_(index),
      pipeline_(std::move(pipeline)),
      push_(context, zmq::socket_type::push),
      sink_(push_),
      queue_(queue_capacity) {
  push_.set(zmq::sockopt::sndhwm, 100000);
  push_.set(zmq::sockopt::linger, 0);
  push_.connect(publisher_endpoint);
}

Worker::~Worker() { Stop(); }

void Worker::Start() { thread_ = std::thread([this] { Run(); }); }

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
  batch->batch.mutable_observations()->Clear();  // keeps the cleared messages for reuse
  batch->arrival_ns.clear();
  std::lock_guard lock(free_mutex_);
  free_batches_.push_back(std::move(batch));
}

void Worker::Run() {
  for (;;) {
    Item item = queue_.Pop();
    if (item.batch) {
      const auto& observations = item.batch->batch.observations();
      for (int i = 0; i < observations.size(); ++i) {
        pipeline_->Process(observations.Get(i), item.batch->arrival_ns[size_t(i)], sink_);
      }
      Recycle(std::move(item.batch));
    }
    if (item.rejection) {
      pipeline_->RejectFrame(item.rejection->reason, item.rejection->detail,
                             item.rejection->arrival_ns, sink_);
    }
    if (item.task) item.task(*pipeline_);
    if (item.stop) break;
  }
  sink_.FlushLog();
}

}  // namespace bayline::server
