// Load generation and measurement pieces of the end-to-end benchmark: pre-encoded ingest frames
// for many channels, a producer that sends them (as fast as possible or paced), counting and
// latency-measuring subscribers, and percentiles.
#pragma once

#include <atomic>
#include <cstdint>
#include <string>
#include <thread>
#include <vector>
#include <zmq.hpp>

namespace bayline::bench {

std::string ChannelName(uint32_t index);  // "bench/site<k>/c<index>"

// `count` serialized IngestFrames cycling over `channels` channels, each holding one observation
// (batch == 0) or an ObservationBatch of `batch` observations; y ~ N(20, 1), seq and time 0 (the
// daemon numbers and stamps them, so re-sending the pool still gives fresh observations).
std::vector<std::string> MakeFrames(uint32_t channels, size_t count, uint32_t batch, uint64_t seed);

// Sends frames[i % frames.size()] for i in [0, total) on a PUSH socket connected to `endpoint`.
void SendAll(zmq::context_t& context, const std::string& endpoint,
             const std::vector<std::string>& frames, size_t total);

// Counts every message on a SUB (subscribed to everything) or PULL socket until Stop().
class Counter {
 public:
  // SUB: connects to `endpoint`; PULL: binds it (read the resolved one back with endpoint()).
  Counter(zmq::context_t& context, const std::string& endpoint, zmq::socket_type type);
  ~Counter();
  const std::string& endpoint() const { return endpoint_; }
  uint64_t count() const { return count_.load(); }
  // Steady-clock ns of the last message received.
  int64_t last_ns() const { return last_ns_.load(); }
  void Stop();

 private:
  zmq::socket_t socket_;
  std::string endpoint_;
  std::atomic<uint64_t> count_{0};
  std::atomic<int64_t> last_ns_{0};
  std::atomic<bool> stop_{false};
  std::thread thread_;
};

int64_t SteadyNs();
int64_t WallNs();

struct Percentiles {
  double p50_us = 0, p99_us = 0, p999_us = 0;
  size_t samples = 0;
};
Percentiles ComputePercentiles(std::vector<int64_t> latencies_ns);

}  // namespace bayline::bench
