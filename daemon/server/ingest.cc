#include "daemon/server/ingest.h"

#include <pthread.h>
#include <spdlog/spdlog.h>

#include <chrono>

#include "daemon/pipeline/pipeline.h"
#include "daemon/server/frame_scan.h"
#include "daemon/server/routing.h"

namespace bayline::server {
namespace {

constexpr const char* kStopEndpoint = "inproc://bayline-ingest-stop";
constexpr int kIngestHighWaterMark = 100000;

// The counters have one writer, the ingest thread: a plain load and store, no locked instruction.
void Increment(std::atomic<uint64_t>& counter) {
  counter.store(counter.load(std::memory_order_relaxed) + 1, std::memory_order_relaxed);
}

int64_t NowNs() {
  return std::chrono::duration_cast<std::chrono::nanoseconds>(
             std::chrono::system_clock::now().time_since_epoch())
      .count();
}

}  // namespace

Ingest::Ingest(zmq::context_t& context, std::vector<Worker*> workers, Shard shard,
               uint32_t max_frame_bytes)
    : context_(context),
      workers_(std::move(workers)),
      shard_(shard),
      max_frame_bytes_(max_frame_bytes),
      stop_receiver_(context, zmq::socket_type::pair),
      stop_sender_(context, zmq::socket_type::pair),
      pending_(workers_.size()) {}

Ingest::~Ingest() { Stop(); }

bool Ingest::Bind(const IngestEndpoints& endpoints, std::vector<std::string>* bound,
                  std::string* error) {
  std::string current;
  try {
    stop_receiver_.bind(kStopEndpoint);
    stop_sender_.connect(kStopEndpoint);
    for (const auto& endpoint : endpoints.pull_bind) {
      current = "pull_bind " + endpoint;
      zmq::socket_t s(context_, zmq::socket_type::pull);
      s.set(zmq::sockopt::rcvhwm, kIngestHighWaterMark);
      s.set(zmq::sockopt::linger, 0);
      s.bind(endpoint);
      bound->push_back(s.get(zmq::sockopt::last_endpoint));
      sockets_.push_back(std::move(s));
    }
    for (const auto& endpoint : endpoints.sub_connect) {
      current = "sub_connect " + endpoint;
      zmq::socket_t s(context_, zmq::socket_type::sub);
      s.set(zmq::sockopt::rcvhwm, kIngestHighWaterMark);
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

void Ingest::Stop() {
  if (!thread_.joinable()) return;
  stop_sender_.send(zmq::str_buffer("stop"), zmq::send_flags::none);
  thread_.join();
}

void Ingest::Run() {
  std::vector<zmq::pollitem_t> items;
  for (auto& s : sockets_) items.push_back({s.handle(), 0, ZMQ_POLLIN, 0});
  items.push_back({stop_receiver_.handle(), 0, ZMQ_POLLIN, 0});
  for (;;) {
    zmq::poll(items.data(), items.size(), std::chrono::milliseconds(-1));
    if (items.back().revents & ZMQ_POLLIN) break;
    // Drain every socket that has messages, in bursts, so one busy socket cannot starve another.
    bool more = true;
    while (more) {
      more = false;
      for (size_t i = 0; i < sockets_.size(); ++i) {
        int n = 0;
        while (n < 256 && HandleMessage(sockets_[i])) ++n;
        if (n == 256) more = true;
      }
    }
    FlushAll();  // nothing more is waiting: hand over partial batches now
  }
  FlushAll();
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
  HandleFrame(part, NowNs());
  return true;
}

void Ingest::HandleFrame(const zmq::message_t& frame, int64_t arrival_ns) {
  const uint32_t limit = max_frame_bytes_.load(std::memory_order_relaxed);
  if (frame.size() > limit) {
    Reject("oversized_frame",
           "frame of " + std::to_string(frame.size()) + " bytes exceeds limits.max_frame_bytes " +
               std::to_string(limit),
           arrival_ns);
    return;
  }
  // The usual case: split the frame without decoding it; the workers decode the observations.
  if (ScanIngestFrame(frame.to_string_view(), &scanned_)) {
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
  if (!batch) batch = workers_[worker]->TakeEmptyBatch();
  batch->Add(observation, arrival_ns);
  Increment(observations_received_);
  if (batch->size() >= kMaxBatch) Flush(worker);
}

void Ingest::Reject(const char* reason, std::string detail, int64_t arrival_ns) {
  if (log_.Allow(reason)) spdlog::warn("ingest: {}: {}", reason, detail);
  workers_[0]->PostFrameRejection(reason, std::move(detail), arrival_ns);
}

void Ingest::Flush(size_t worker) {
  auto& batch = pending_[worker];
  if (!batch || batch->size() == 0) return;
  if (!workers_[worker]->TryProcessHere(*batch)) workers_[worker]->Submit(std::move(batch));
}

void Ingest::FlushAll() {
  for (size_t w = 0; w < pending_.size(); ++w) Flush(w);
}

}  // namespace bayline::server
