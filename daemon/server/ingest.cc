#include "daemon/server/ingest.h"

#include <poll.h>
#include <pthread.h>
#include <spdlog/spdlog.h>
#include <sys/eventfd.h>
#include <unistd.h>

#include <cerrno>
#include <chrono>
#include <cstring>

#include "daemon/pipeline/channel_name.h"
#include "daemon/server/frame_scan.h"
#include "daemon/server/routing.h"

namespace bayline::server {
namespace {

// The counters have one writer, the ingest thread: a plain load and store, no locked instruction.
void Increment(std::atomic<uint64_t>& counter) {
  counter.store(counter.load(std::memory_order_relaxed) + 1, std::memory_order_relaxed);
}

int64_t NowNs() {
  return std::chrono::duration_cast<std::chrono::nanoseconds>(
             std::chrono::system_clock::now().time_since_epoch())
      .count();
}

// The journal's interval timer runs on the monotonic clock.
int64_t SteadyNs() {
  return std::chrono::duration_cast<std::chrono::nanoseconds>(
             std::chrono::steady_clock::now().time_since_epoch())
      .count();
}

}  // namespace

Ingest::Ingest(zmq::context_t& context, std::vector<Worker*> workers, Shard shard,
               uint32_t max_frame_bytes, uint32_t ingest_message_bytes, int ingest_receive_messages)
    : context_(context),
      workers_(std::move(workers)),
      shard_(shard),
      max_frame_bytes_(max_frame_bytes),
      ingest_message_bytes_(ingest_message_bytes),
      ingest_receive_messages_(ingest_receive_messages),
      wake_fd_(eventfd(0, EFD_CLOEXEC | EFD_NONBLOCK)),
      pending_(workers_.size()) {}

Ingest::~Ingest() {
  Stop();
  if (wake_fd_ >= 0) close(wake_fd_);
}

bool Ingest::Bind(const IngestEndpoints& endpoints, std::vector<std::string>* bound,
                  std::string* error) {
  if (wake_fd_ < 0) {
    *error = std::string("ingest: eventfd: ") + std::strerror(errno);
    return false;
  }
  std::string current;
  try {
    for (const auto& endpoint : endpoints.pull_bind) {
      current = "pull_bind " + endpoint;
      zmq::socket_t s(context_, zmq::socket_type::pull);
      s.set(zmq::sockopt::rcvhwm, ingest_receive_messages_);
      s.set(zmq::sockopt::maxmsgsize, int64_t(ingest_message_bytes_));
      s.set(zmq::sockopt::linger, 0);
      s.bind(endpoint);
      bound->push_back(s.get(zmq::sockopt::last_endpoint));
      sockets_.push_back(std::move(s));
    }
    for (const auto& endpoint : endpoints.sub_connect) {
      current = "sub_connect " + endpoint;
      zmq::socket_t s(context_, zmq::socket_type::sub);
      s.set(zmq::sockopt::rcvhwm, ingest_receive_messages_);
      s.set(zmq::sockopt::maxmsgsize, int64_t(ingest_message_bytes_));
      s.set(zmq::sockopt::linger, 0);
      s.set(zmq::sockopt::subscribe, "");
      s.connect(endpoint);
      bound->push_back(endpoint);
      sockets_.push_back(std::move(s));
    }
  } catch (const zmq::error_t& e) {
    *error = current + ": " + e.what();
    return false;
  }
  return true;
}

void Ingest::Start() {
  thread_ = std::thread([this] {
    pthread_setname_np(pthread_self(), "bl-ingest");
    Run();
  });
}

void Ingest::Wake() {
  const uint64_t one = 1;
  while (write(wake_fd_, &one, sizeof one) < 0 && errno == EINTR) {
  }
}

void Ingest::Stop() {
  if (!thread_.joinable()) return;
  stopping_.store(true);
  Wake();
  thread_.join();
  std::string error;
  if (journal_ != nullptr && !journal_->Sync(&error)) spdlog::error("journal: {}", error);
}

void Ingest::RunAtFrameBoundary(const std::function<void()>& task) {
  if (!thread_.joinable()) {
    FlushAll();
    task();
    return;
  }
  std::unique_lock lock(boundary_mutex_);
  boundary_task_ = &task;
  boundary_requested_.store(true);
  Wake();
  boundary_done_.wait(lock, [this] { return boundary_task_ == nullptr; });
}

void Ingest::RunBoundaryTask() {
  if (!boundary_requested_.load()) return;
  std::lock_guard lock(boundary_mutex_);
  boundary_requested_.store(false);
  if (boundary_task_ == nullptr) return;
  FlushAll();
  (*boundary_task_)();
  boundary_task_ = nullptr;
  boundary_done_.notify_all();
}

void Ingest::ReplayFrame(std::string_view frame, int64_t arrival_ns) {
  ++frame_number_;  // any number that differs from the previous frame's
  HandleFrame(frame, arrival_ns, /*journal=*/false);
  MarkFrameEnds();
}

void Ingest::Run() {
  // The sockets' ZMQ_FDs and the stop eventfd in one poll(2). A ZMQ_FD is edge-triggered: it
  // signals again only after a receive on its socket has found nothing, which the drain below
  // always ends with. (zmq::poll would also do this, but it checks every socket's events before
  // and after each wait, a few system calls each, which at moderate rates cost more than the
  // frame.)
  std::vector<pollfd> fds;
  for (auto& s : sockets_) fds.push_back({s.get(zmq::sockopt::fd), POLLIN, 0});
  fds.push_back({wake_fd_, POLLIN, 0});
  while (!stopping_.load(std::memory_order_relaxed)) {
    // Drain every socket, in bursts, so one busy socket cannot starve another.
    bool more = true;
    while (more && !stopping_.load(std::memory_order_relaxed)) {
      RunBoundaryTask();
      more = false;
      for (size_t i = 0; i < sockets_.size(); ++i) {
        int n = 0;
        // A pending boundary task (a snapshot) ends the burst: each frame may wait for a worker.
        while (n < 256 && !boundary_requested_.load(std::memory_order_relaxed) &&
               HandleMessage(sockets_[i])) {
          ++n;
        }
        if (n == 256 || boundary_requested_.load(std::memory_order_relaxed)) more = true;
      }
    }
    FlushAll();  // nothing more is waiting: hand over partial batches now
    RunBoundaryTask();
    // ZMQ_FD only says that the socket's state may have changed: before sleeping, ask each socket
    // (ZMQ_EVENTS, which also processes its pending commands) whether a message came meanwhile,
    // e.g. from a producer that the receive high-water mark had held back.
    bool readable = false;
    for (auto& s : sockets_) readable = readable || (s.get(zmq::sockopt::events) & ZMQ_POLLIN);
    if (readable) continue;
    // The interval policy's timer: wake up to sync what is written but not yet synced.
    int timeout_ms = -1;
    if (journal_ != nullptr && journal_->sync_deadline_ns() >= 0) {
      const int64_t wait_ns = journal_->sync_deadline_ns() - SteadyNs();
      timeout_ms = wait_ns <= 0 ? 0 : int(wait_ns / 1'000'000 + 1);
    }
    if (poll(fds.data(), fds.size(), timeout_ms) < 0 && errno != EINTR) {
      spdlog::error("ingest: poll: {}", std::strerror(errno));
      break;
    }
    if (fds.back().revents & POLLIN) {
      uint64_t count = 0;
      (void)!read(wake_fd_, &count, sizeof count);  // reset the eventfd; stopping_ says why
    }
    if (journal_ != nullptr && journal_->SyncDue(SteadyNs()) && !journal_->Sync(&journal_error_)) {
      if (log_.Allow("journal_failed")) spdlog::error("journal: {}", journal_error_);
    }
  }
  FlushAll();
  RunBoundaryTask();
  log_.Flush();
}

bool Ingest::HandleMessage(zmq::socket_t& socket) {
  zmq::message_t part;
  if (!socket.recv(part, zmq::recv_flags::dontwait)) return false;
  while (part.more()) {  // keep only the last part: the frame
    zmq::message_t next;
    if (!socket.recv(next, zmq::recv_flags::none)) return false;
    part = std::move(next);
  }
  Increment(frames_received_);
  frame_number_ = frames_received_.load(std::memory_order_relaxed);
  HandleFrame(part.to_string_view(), NowNs(), /*journal=*/true);
  MarkFrameEnds();
  return true;
}

void Ingest::MarkFrameEnds() {
  // Route hands a batch over only when a further observation comes for it, so each worker's last
  // entry of this frame is still pending here.
  for (auto& batch : pending_) {
    if (batch && batch->size() > 0 && batch->entries.back().frame == frame_number_) {
      batch->entries.back().frame_end = true;
    }
  }
}

void Ingest::HandleFrame(std::string_view frame, int64_t arrival_ns, bool journal) {
  const uint32_t limit = max_frame_bytes_.load(std::memory_order_relaxed);
  if (frame.size() > limit) {
    Reject("oversized_frame",
           "frame of " + std::to_string(frame.size()) + " bytes exceeds limits.max_frame_bytes " +
               std::to_string(limit),
           arrival_ns);
    return;
  }
  if (journal && journal_ != nullptr &&
      !journal_->Append(arrival_ns, frame, SteadyNs(), &journal_error_)) {
    Reject("journal_failed", "frame not applied: " + journal_error_, arrival_ns);
    return;
  }
  // The usual case: split the frame without decoding it; the workers decode the observations.
  if (ScanIngestFrame(frame, &scanned_)) {
    for (const ScannedObservation& o : scanned_) Route(o.channel, o.bytes, arrival_ns);
    return;
  }
  // Anything else is decoded here by protobuf, which decides whether the frame is valid; its
  // observations are handed over re-encoded.
  if (!frame_.ParseFromArray(frame.data(), int(frame.size()))) {
    Reject("malformed_frame",
           "frame of " + std::to_string(frame.size()) + " bytes is not a bayline.v1.IngestFrame",
           arrival_ns);
    return;
  }
  switch (frame_.payload_case()) {
    case bayline::v1::IngestFrame::kObservation:
      RouteDecoded(frame_.observation(), arrival_ns);
      break;
    case bayline::v1::IngestFrame::kBatch:
      for (const auto& observation : frame_.batch().observations()) {
        RouteDecoded(observation, arrival_ns);
      }
      break;
    default:
      Reject("malformed_frame", "frame holds neither an observation nor a batch", arrival_ns);
  }
}

void Ingest::RouteDecoded(const bayline::v1::Observation& observation, int64_t arrival_ns) {
  observation.SerializeToString(&encoded_);
  Route(observation.channel(), encoded_, arrival_ns);
}

void Ingest::Route(std::string_view channel, std::string_view observation, int64_t arrival_ns) {
  const uint64_t h = pipeline::ChannelHash(channel);
  if (!InShard(h, shard_)) {
    Increment(other_shard_);
    return;
  }
  const size_t worker = WorkerOf(h, shard_, workers_.size());
  auto& batch = pending_[worker];
  if (batch && (batch->size() >= kMaxBatch || batch->bytes.size() >= kMaxBatchBytes)) {
    Flush(worker);
  }
  if (!batch) batch = workers_[worker]->TakeEmptyBatch();
  batch->Add(observation, arrival_ns, h, frame_number_);
  Increment(observations_received_);
}

void Ingest::Reject(const char* reason, std::string detail, int64_t arrival_ns) {
  if (log_.Allow(reason)) spdlog::warn("ingest: {}: {}", reason, detail);
  workers_[0]->PostFrameRejection(reason, std::move(detail), arrival_ns);
}

void Ingest::Flush(size_t worker) {
  auto& batch = pending_[worker];
  if (!batch || batch->size() == 0) return;
  workers_[worker]->Submit(std::move(batch));
}

void Ingest::FlushAll() {
  for (size_t w = 0; w < pending_.size(); ++w) Flush(w);
}

}  // namespace bayline::server
