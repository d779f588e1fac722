#include "tests/bench/e2e/load.h"

#include <algorithm>
#include <chrono>
#include <random>

#include "bayline/v1/observation.pb.h"

namespace bayline::bench {

int64_t SteadyNs() {
  return std::chrono::duration_cast<std::chrono::nanoseconds>(
             std::chrono::steady_clock::now().time_since_epoch())
      .count();
}

int64_t WallNs() {
  return std::chrono::duration_cast<std::chrono::nanoseconds>(
             std::chrono::system_clock::now().time_since_epoch())
      .count();
}

std::string ChannelName(uint32_t index) {
  return "bench/site" + std::to_string(index % 100) + "/c" + std::to_string(index);
}

std::vector<std::string> MakeFrames(uint32_t channels, size_t count, uint32_t batch,
                                    uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> y(20.0, 1.0);
  std::vector<std::string> frames;
  frames.reserve(count);
  uint32_t next_channel = 0;
  bayline::v1::IngestFrame frame;
  for (size_t i = 0; i < count; ++i) {
    frame.Clear();
    const uint32_t n = batch == 0 ? 1 : batch;
    for (uint32_t k = 0; k < n; ++k) {
      bayline::v1::Observation* o =
          batch == 0 ? frame.mutable_observation() : frame.mutable_batch()->add_observations();
      o->set_channel(ChannelName(next_channel));
      o->set_y(y(rng));
      next_channel = (next_channel + 1) % channels;
    }
    frames.push_back(frame.SerializeAsString());
  }
  return frames;
}

void SendAll(zmq::context_t& context, const std::string& endpoint,
             const std::vector<std::string>& frames, size_t total) {
  zmq::socket_t push(context, zmq::socket_type::push);
  push.set(zmq::sockopt::sndhwm, 100000);
  push.set(zmq::sockopt::linger, -1);
  push.connect(endpoint);
  for (size_t i = 0; i < total; ++i) {
    push.send(zmq::buffer(frames[i % frames.size()]), zmq::send_flags::none);
  }
}

Counter::Counter(zmq::context_t& context, const std::string& endpoint, zmq::socket_type type)
    : socket_(context, type) {
  socket_.set(zmq::sockopt::rcvhwm, 0);
  socket_.set(zmq::sockopt::linger, 0);
  if (type == zmq::socket_type::sub) {
    socket_.set(zmq::sockopt::subscribe, "");
    socket_.connect(endpoint);
    endpoint_ = endpoint;
  } else {
    socket_.bind(endpoint);
    endpoint_ = socket_.get(zmq::sockopt::last_endpoint);
  }
  thread_ = std::thread([this] {
    zmq::message_t message;
    while (!stop_.load(std::memory_order_relaxed)) {
      zmq::pollitem_t item{socket_.handle(), 0, ZMQ_POLLIN, 0};
      if (zmq::poll(&item, 1, std::chrono::milliseconds(50)) == 0) continue;
      while (socket_.recv(message, zmq::recv_flags::dontwait)) {
        if (!message.more()) count_.fetch_add(1, std::memory_order_relaxed);
      }
      last_ns_.store(SteadyNs(), std::memory_order_relaxed);
    }
  });
}

Counter::~Counter() { Stop(); }

void Counter::Stop() {
  stop_ = true;
  if (thread_.joinable()) thread_.join();
}

Percentiles ComputePercentiles(std::vector<int64_t> latencies_ns) {
  Percentiles p;
  p.samples = latencies_ns.size();
  if (latencies_ns.empty()) return p;
  std::sort(latencies_ns.begin(), latencies_ns.end());
  auto at = [&](double q) {
    size_t i = std::min(latencies_ns.size() - 1, size_t(q * double(latencies_ns.size())));
    return double(latencies_ns[i]) / 1000.0;
  };
  p.p50_us = at(0.50);
  p.p99_us = at(0.99);
  p.p999_us = at(0.999);
  return p;
}

}  // namespace bayline::bench
