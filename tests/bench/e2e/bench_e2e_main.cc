// bayline_bench_e2e: end-to-end benchmark of a real baylined process over tcp loopback.
//
// Scenarios (default rule: model auto -> gaussian with ls, ml, map and a self-starting CUSUM with
// arl0 1000; estimates every 100th observation per channel; 10,000 channels):
//   single   one observation per frame: obs/s ingested and estimated, and the raw ZeroMQ receive
//            rate of the same frames (PULL, no decoding) for comparison
//   batch    100 observations per frame: the same two rates
//   latency  paced 50,000 obs/s, every observation published: send -> publication p50/p99/p99.9,
//            and the raw one-hop (PUSH -> PULL) latency at the same pace, and the floor of a bare
//            relay with baylined's thread structure (relay_floor.h) at the same pace
//   memory   1,000,000 channels, one observation each: daemon RSS growth per channel
// Everything is bounded in count and time and runs on loopback. Flags: --quick (smaller counts,
// for a smoke run); --only=single|batch|latency|memory (one scenario, e.g. under perf);
// --baylined=PATH (measure another build of the daemon); other arguments (e.g. make bench's
// --benchmark_min_time) are ignored.
#include <signal.h>
#include <unistd.h>

#include <atomic>
#include <chrono>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <random>
#include <string>
#include <string_view>
#include <thread>
#include <vector>

#include "bayline/v1/observation.pb.h"
#include "bayline/v1/publication.pb.h"
#include "tests/bench/e2e/daemon_process.h"
#include "tests/bench/e2e/load.h"
#include "tests/bench/e2e/relay_floor.h"

namespace bayline::bench {
namespace {

constexpr uint32_t kChannels = 10000;

struct Sizes {
  size_t single_frames = 2'000'000;
  size_t batch_frames = 60'000;  // x 100 observations
  double latency_seconds = 4;
  uint32_t memory_channels = 1'000'000;
};

std::string WriteConfig(const std::string& dir, const std::string& name, uint32_t every_n) {
  const std::string path = dir + "/" + name;
  std::ofstream(path) << "rules { name: \"bench\" match: \"**\" spec { model: \"auto\" publish { "
                         "every_n: "
                      << every_n
                      << " } detectors { kind: \"cusum\" arl0: 1000 } } }\n"
                         "limits { max_channels: 1000000 }\n";
  return path;
}

void WaitCount(const Counter& counter, uint64_t n) {
  const auto deadline = std::chrono::steady_clock::now() + std::chrono::seconds(120);
  while (counter.count() < n && std::chrono::steady_clock::now() < deadline) {
    std::this_thread::sleep_for(std::chrono::milliseconds(1));
  }
}

// Raw ZeroMQ receive rate of `frames` (observations per second), no decoding.
double RawRate(zmq::context_t& ctx, const std::vector<std::string>& frames, size_t total,
               uint32_t per_frame) {
  Counter pull(ctx, "tcp://127.0.0.1:*", zmq::socket_type::pull);
  const int64_t t0 = SteadyNs();
  SendAll(ctx, pull.endpoint(), frames, total);
  WaitCount(pull, total);
  return double(total) * per_frame / (double(pull.last_ns() - t0) * 1e-9);
}

struct DaemonRun {
  double obs_per_s = 0;
  uint64_t publications = 0;
  double cpu_us_per_obs = 0;  // daemon CPU time (all threads) per observation
};

DaemonRun DaemonRate(zmq::context_t& ctx, const std::string& baylined, const std::string& dir,
                     const std::string& config, const std::vector<std::string>& frames,
                     size_t total, uint32_t per_frame) {
  DaemonProcess d(ctx, baylined, dir, {"--config", config});
  Counter sub(ctx, d.publish_endpoint(), zmq::socket_type::sub);
  const double cpu0 = d.CpuSeconds();
  const int64_t t0 = SteadyNs();
  SendAll(ctx, d.pull_endpoint(), frames, total);
  d.WaitAccepted(uint64_t(total) * per_frame, 300);
  const int64_t t1 = SteadyNs();
  DaemonRun run;
  run.obs_per_s = double(total) * per_frame / (double(t1 - t0) * 1e-9);
  run.cpu_us_per_obs = (d.CpuSeconds() - cpu0) * 1e6 / (double(total) * per_frame);
  run.publications = d.Stats().publications();
  return run;
}

// Paced sender: observations of kChannels channels at `rate` per second for `seconds`, each
// stamped with the wall-clock send time. `raw` sends [timestamp, frame] for the one-hop baseline.
void SendPaced(zmq::context_t& ctx, const std::string& endpoint, double rate, double seconds,
               bool raw) {
  zmq::socket_t push(ctx, zmq::socket_type::push);
  push.set(zmq::sockopt::sndhwm, 100000);
  push.set(zmq::sockopt::linger, -1);
  push.connect(endpoint);
  std::mt19937_64 rng(5);
  std::normal_distribution<double> y(20.0, 1.0);
  bayline::v1::IngestFrame frame;
  std::string bytes;
  const size_t total = size_t(rate * seconds);
  const auto start = std::chrono::steady_clock::now();
  for (size_t i = 0; i < total; ++i) {
    std::this_thread::sleep_until(start +
                                  std::chrono::nanoseconds(int64_t(double(i) * 1e9 / rate)));
    auto* o = frame.mutable_observation();
    o->set_channel(ChannelName(uint32_t(i % kChannels)));
    o->set_y(y(rng));
    const int64_t now = WallNs();
    o->set_time_ns(now);
    frame.SerializeToString(&bytes);
    if (raw) push.send(zmq::buffer(&now, sizeof now), zmq::send_flags::sndmore);
    push.send(zmq::buffer(bytes), zmq::send_flags::none);
  }
}

// The first fields of a serialized Publication holding an Estimate, as protobuf writes them (field
// order, proto3: zero fields omitted): estimate = 1 { channel = 1, seq = 2, time_ns = 3 }.
struct EstimateHead {
  std::string_view channel;
  uint64_t seq = 0;
  int64_t time_ns = 0;
};

bool ReadVarint(const uint8_t*& p, const uint8_t* end, uint64_t* value) {
  uint64_t v = 0;
  for (int shift = 0; shift < 64 && p != end; shift += 7) {
    const uint8_t byte = *p++;
    v |= uint64_t(byte & 0x7F) << shift;
    if (byte < 0x80) {
      *value = v;
      return true;
    }
  }
  return false;
}

// False when the publication is not laid out that way (the caller then decodes it in full).
bool ReadEstimateHead(std::string_view bytes, EstimateHead* out) {
  const auto* p = reinterpret_cast<const uint8_t*>(bytes.data());
  const uint8_t* end = p + bytes.size();
  uint64_t length = 0, seq = 0, time_ns = 0;
  if (p == end || *p++ != 0x0A || !ReadVarint(p, end, &length)) return false;  // estimate
  if (p == end || *p++ != 0x0A || !ReadVarint(p, end, &length)) return false;  // channel
  if (length > uint64_t(end - p)) return false;
  out->channel = std::string_view(reinterpret_cast<const char*>(p), length);
  p += length;
  if (p == end || *p++ != 0x10 || !ReadVarint(p, end, &seq)) return false;
  if (p == end || *p++ != 0x18 || !ReadVarint(p, end, &time_ns)) return false;
  out->seq = seq;
  out->time_ns = int64_t(time_ns);
  return true;
}

// The <index> of a ChannelName ("bench/site<k>/c<index>"); kChannels when it is not one.
uint32_t ChannelIndex(std::string_view name) {
  const size_t at = name.rfind("/c");
  if (at == std::string_view::npos || at + 2 == name.size()) return kChannels;
  uint32_t index = 0;
  for (char c : name.substr(at + 2)) {
    if (c < '0' || c > '9' || index > kChannels) return kChannels;
    index = index * 10 + uint32_t(c - '0');
  }
  return index;
}

// Latency of the first publication of every observation (estimate time_ns = send time).
Percentiles DaemonLatency(zmq::context_t& ctx, const std::string& baylined, const std::string& dir,
                          const std::string& config, double seconds) {
  DaemonProcess d(ctx, baylined, dir, {"--config", config});
  // Warm-up: create every channel first, so the measurement sees the steady state.
  SendAll(ctx, d.pull_endpoint(), MakeFrames(kChannels, kChannels / 100, 100, 3), kChannels / 100);
  d.WaitAccepted(kChannels, 60);
  zmq::socket_t sub(ctx, zmq::socket_type::sub);
  sub.set(zmq::sockopt::rcvhwm, 0);
  sub.set(zmq::sockopt::subscribe, "estimate/");
  sub.connect(d.publish_endpoint());
  std::vector<int64_t> latencies;
  latencies.reserve(size_t(50000 * seconds) + 1);  // no reallocation stalls while sampling
  std::vector<uint64_t> last_seq(kChannels, 0);
  std::atomic<bool> done{false};
  std::thread receiver([&] {
    bayline::v1::Publication p;
    zmq::message_t topic, body;
    while (!done.load()) {
      zmq::pollitem_t item{sub.handle(), 0, ZMQ_POLLIN, 0};
      if (zmq::poll(&item, 1, std::chrono::milliseconds(50)) == 0) continue;
      while (sub.recv(topic, zmq::recv_flags::dontwait)) {
        (void)sub.recv(body);
        const int64_t now = WallNs();
        // Reading only the head of the estimate keeps this thread's cost per publication at tens
        // of nanoseconds: decoding every publication in full here (three per observation) delayed
        // the publications queued behind it and so inflated the measured latency.
        EstimateHead head;
        if (!ReadEstimateHead(body.to_string_view(), &head)) {
          if (!p.ParseFromArray(body.data(), int(body.size())) || !p.has_estimate()) continue;
          head = {p.estimate().channel(), p.estimate().seq(), p.estimate().time_ns()};
        }
        const uint32_t index = ChannelIndex(head.channel);
        if (index >= kChannels || head.seq <= last_seq[index]) continue;
        last_seq[index] = head.seq;
        latencies.push_back(now - head.time_ns);
      }
    }
  });
  // The subscription needs a moment to reach the PUB socket; the first paced observations may be
  // missed (they are simply not sampled).
  const double cpu0 = d.CpuSeconds();
  const int64_t t0 = SteadyNs();
  SendPaced(ctx, d.pull_endpoint(), 50000, seconds, false);
  const double send_s = double(SteadyNs() - t0) * 1e-9;
  d.WaitAccepted(kChannels + uint64_t(50000 * seconds), 60);
  const double accept_s = double(SteadyNs() - t0) * 1e-9;
  std::printf(
      "  (latency run: sent in %.2f s, all accepted after %.2f s, daemon cpu %.2f us/obs)\n",
      send_s, accept_s, (d.CpuSeconds() - cpu0) * 1e6 / (50000 * seconds));
  const int64_t wait_end = SteadyNs() + 200'000'000;  // let the last publications arrive
  while (SteadyNs() < wait_end) std::this_thread::sleep_for(std::chrono::milliseconds(10));
  done = true;
  receiver.join();
  return ComputePercentiles(std::move(latencies));
}

Percentiles RawLatency(zmq::context_t& ctx, double seconds) {
  zmq::socket_t pull(ctx, zmq::socket_type::pull);
  pull.set(zmq::sockopt::rcvhwm, 0);
  pull.bind("tcp://127.0.0.1:*");
  const std::string endpoint = pull.get(zmq::sockopt::last_endpoint);
  std::vector<int64_t> latencies;
  const size_t total = size_t(50000 * seconds);
  latencies.reserve(total);
  std::thread receiver([&] {
    zmq::message_t stamp, body;
    pull.set(zmq::sockopt::rcvtimeo, 5000);
    while (latencies.size() < total) {
      if (!pull.recv(stamp)) break;
      (void)pull.recv(body);
      int64_t sent;
      std::memcpy(&sent, stamp.data(), sizeof sent);
      latencies.push_back(WallNs() - sent);
    }
  });
  SendPaced(ctx, endpoint, 50000, seconds, true);
  receiver.join();
  return ComputePercentiles(std::move(latencies));
}

double MemoryPerChannel(zmq::context_t& ctx, const std::string& baylined, const std::string& dir,
                        const std::string& config, uint32_t channels, uint64_t* rss_total) {
  DaemonProcess d(ctx, baylined, dir, {"--config", config});
  d.WaitAccepted(0, 10);
  const uint64_t before = d.RssBytes();
  const size_t frames = channels / 100;
  SendAll(ctx, d.pull_endpoint(), MakeFrames(channels, frames, 100, 9), frames);
  d.WaitAccepted(channels, 600);
  *rss_total = d.RssBytes();
  return double(*rss_total - before) / channels;
}

}  // namespace
}  // namespace bayline::bench

int main(int argc, char** argv) {
  using namespace bayline::bench;
  Sizes sizes;
  std::string baylined = BAYLINED_PATH;  // --baylined=PATH: another build, for comparisons
  std::string only;  // --only single|batch|latency|memory: one scenario (for profiling)
  for (int i = 1; i < argc; ++i) {
    const std::string arg = argv[i];
    if (arg == "--quick") sizes = {200'000, 6'000, 1, 100'000};
    if (arg.rfind("--only=", 0) == 0) only = arg.substr(7);
    if (arg.rfind("--baylined=", 0) == 0) baylined = arg.substr(11);
  }
  const auto run = [&only](const char* scenario) { return only.empty() || only == scenario; };
  char pattern[] = "/tmp/bayline-bench-e2e-XXXXXX";
  const std::string dir = mkdtemp(pattern);
  const std::string every100 = WriteConfig(dir, "every100.conf", 100);
  const std::string every1 = WriteConfig(dir, "every1.conf", 1);
  zmq::context_t ctx(1);
  std::printf("bayline_bench_e2e: baylined over tcp loopback, %u channels, %u cores\n", kChannels,
              std::thread::hardware_concurrency());
  try {
    const char* row = "%-34s %14.0f %14.0f %9.3f %12llu %12.2f\n";
    if (run("single") || run("batch")) {
      std::printf("\n%-34s %14s %14s %9s %12s %12s\n", "throughput (estimates every 100th)",
                  "daemon obs/s", "raw zmq obs/s", "fraction", "publications", "cpu us/obs");
    }
    if (run("single")) {
      const auto single = MakeFrames(kChannels, 200'000, 0, 1);
      const double raw_single = RawRate(ctx, single, sizes.single_frames, 1);
      const DaemonRun d_single =
          DaemonRate(ctx, baylined, dir + "/single", every100, single, sizes.single_frames, 1);
      std::printf(row, "single-observation frames", d_single.obs_per_s, raw_single,
                  d_single.obs_per_s / raw_single,
                  static_cast<unsigned long long>(d_single.publications), d_single.cpu_us_per_obs);
      std::fflush(stdout);
    }
    if (run("batch")) {
      const auto batch = MakeFrames(kChannels, 2'000, 100, 2);
      const double raw_batch = RawRate(ctx, batch, sizes.batch_frames, 100);
      const DaemonRun d_batch =
          DaemonRate(ctx, baylined, dir + "/batch", every100, batch, sizes.batch_frames, 100);
      std::printf(row, "100-observation batch frames", d_batch.obs_per_s, raw_batch,
                  d_batch.obs_per_s / raw_batch,
                  static_cast<unsigned long long>(d_batch.publications), d_batch.cpu_us_per_obs);
      std::fflush(stdout);
    }
    if (run("latency")) {
      const Percentiles raw_lat = RawLatency(ctx, sizes.latency_seconds);
      const auto send_paced = [&](const std::string& endpoint) {
        SendPaced(ctx, endpoint, 50000, sizes.latency_seconds, true);
      };
      const Percentiles two_hops = RelayLatency(ctx, false, send_paced);
      const Percentiles floor_lat = RelayLatency(ctx, true, send_paced);
      const Percentiles lat =
          DaemonLatency(ctx, baylined, dir + "/latency", every1, sizes.latency_seconds);
      std::printf("\n%-34s %10s %10s %10s %10s\n", "latency at 50,000 obs/s (us)", "p50", "p99",
                  "p99.9", "samples");
      std::printf("%-34s %10.1f %10.1f %10.1f %10zu\n", "send -> publication (baylined)",
                  lat.p50_us, lat.p99_us, lat.p999_us, lat.samples);
      std::printf("%-34s %10.1f %10.1f %10.1f %10zu\n", "raw one hop (PUSH -> PULL)",
                  raw_lat.p50_us, raw_lat.p99_us, raw_lat.p999_us, raw_lat.samples);
      std::printf("%-34s %10.1f %10.1f %10.1f %10zu\n", "relay, two hops, no hand-off",
                  two_hops.p50_us, two_hops.p99_us, two_hops.p999_us, two_hops.samples);
      std::printf("%-34s %10.1f %10.1f %10.1f %10zu\n", "relay floor (no estimation)",
                  floor_lat.p50_us, floor_lat.p99_us, floor_lat.p999_us, floor_lat.samples);
      std::printf("%-34s %10s %10.1f\n", "p99 above raw", "", lat.p99_us - raw_lat.p99_us);
      std::printf("%-34s %10s %10.1f\n", "two hops p99 above raw", "",
                  two_hops.p99_us - raw_lat.p99_us);
      std::printf("%-34s %10s %10.1f\n", "relay floor p99 above raw", "",
                  floor_lat.p99_us - raw_lat.p99_us);
      std::fflush(stdout);
    }
    if (run("memory")) {
      uint64_t rss = 0;
      const double per_channel =
          MemoryPerChannel(ctx, baylined, dir + "/memory", every100, sizes.memory_channels, &rss);
      std::printf("\n%-34s %10u channels, RSS %.1f MiB, %.0f bytes per channel\n", "memory",
                  sizes.memory_channels, double(rss) / (1 << 20), per_channel);
    }
  } catch (const std::exception& e) {
    std::fprintf(stderr, "bayline_bench_e2e: %s\n", e.what());
    std::filesystem::remove_all(dir);
    return 1;
  }
  std::filesystem::remove_all(dir);
  return 0;
}
