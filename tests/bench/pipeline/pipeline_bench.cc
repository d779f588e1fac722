// Pipeline throughput and footprint.
//
// BM_ProcessGaussian/channels:C/every_n:N: ns per Pipeline::Process() call for gaussian channels
// with the default rule (ls + ml + map + a self-starting CUSUM), publishing every Nth observation
// of each channel (three estimates) into a sink that only counts; N = 1 is the latency scenario's
// load, N = 100 the throughput scenarios'. Before timing, channel i has seen 1 + i % 100
// observations, so publications happen at the steady rate (1 call in 100) at every channel count.
// Channels are visited with a large prime stride, so at 1e6 channels nearly every call misses the
// cache, as in a fleet where observations interleave. The observation message is reused (as the
// daemon reuses its parsed frames); seq is 0 (the pipeline numbers it), time advances by 1 ms per
// call. Counter bytes_per_channel: growth of the resident set (/proc/self/statm) while the channels
// were created (each with one observation), divided by the channel count. It reads low (even 0)
// when a fleet reuses memory that the previous case's larger fleet freed; heap_bytes_per_channel,
// the growth of the bytes malloc has handed out (mallinfo2, malloc's own headers excluded), does
// not. Counter allocs_per_call: heap allocations (global operator new, counted by this program) per
// Process() call in the timed loop, publications included.
//
// Run: build-x/tests/bench/pipeline/bayline_bench_pipeline
#include <benchmark/benchmark.h>
#include <malloc.h>
#include <unistd.h>

#include <cstdio>
#include <cstdlib>
#include <memory>
#include <new>
#include <string>
#include <vector>

#include "daemon/pipeline/daemon_config.h"
#include "daemon/pipeline/pipeline.h"
#include "daemon/pipeline/publication_sink.h"

// Counts heap allocations of the whole program (single-threaded benchmark: a plain counter).
static long g_allocations = 0;
void* operator new(std::size_t n) {
  ++g_allocations;
  if (void* p = std::malloc(n == 0 ? 1 : n)) return p;
  throw std::bad_alloc();
}
// GCC cannot see that these replace the global operator new above, which uses malloc.
#pragma GCC diagnostic push
#pragma GCC diagnostic ignored "-Wmismatched-new-delete"
void operator delete(void* p) noexcept { std::free(p); }
void operator delete(void* p, std::size_t) noexcept { std::free(p); }
#pragma GCC diagnostic pop

namespace bayline::pipeline {
namespace {

class CountingSink : public PublicationSink {
 public:
  void Publish(const std::string&, const bayline::v1::Publication&) override { ++count; }
  uint64_t count = 0;
};

long ResidentBytes() {
  long pages_total = 0, pages_resident = 0;
  std::FILE* f = std::fopen("/proc/self/statm", "r");
  if (f == nullptr) return 0;
  if (std::fscanf(f, "%ld %ld", &pages_total, &pages_resident) != 2) pages_resident = 0;
  std::fclose(f);
  return pages_resident * sysconf(_SC_PAGESIZE);
}

// Bytes in use from malloc: small blocks (arena) plus large ones (mmapped).
std::size_t HeapBytes() {
  const struct mallinfo2 m = mallinfo2();
  return m.uordblks + m.hblkhd;
}

// One populated pipeline, kept across benchmark repetitions for the same channel count.
struct Fleet {
  Fleet(std::size_t n, int every_n) : every(every_n) {
    names.reserve(n);
    for (std::size_t i = 0; i < n; ++i) {
      names.push_back("coldstore/site" + std::to_string(i % 97) + "/probe" + std::to_string(i));
    }
    auto config = DefaultConfig();
    config.mutable_rules(0)->mutable_spec()->mutable_publish()->set_every_n(
        static_cast<uint32_t>(every_n));
    const long before = ResidentBytes();
    const std::size_t heap_before = HeapBytes();
    pipeline = std::make_unique<Pipeline>(config);
    bayline::v1::Observation obs;
    for (std::size_t i = 0; i < n; ++i) {
      obs.set_channel(names[i]);
      obs.set_y(-18.0 + 0.001 * static_cast<double>(i % 1000));
      pipeline->Process(obs, Now(), sink);
    }
    bytes_per_channel = static_cast<double>(ResidentBytes() - before) / static_cast<double>(n);
    heap_bytes_per_channel = (static_cast<double>(HeapBytes()) - static_cast<double>(heap_before)) /
                             static_cast<double>(n);
    // Spread the channels over the publish cycle (channel i has seen 1 + i % 100 observations), so
    // the timed loop publishes at the steady rate of one call in 100 whatever the channel count.
    for (std::size_t i = 0; i < n; ++i) {
      obs.set_channel(names[i]);
      for (std::size_t k = 0; k < i % 100; ++k) {
        obs.set_y(-18.0 + 0.01 * static_cast<double>(k % 7));
        pipeline->Process(obs, Now(), sink);
      }
    }
  }
  int64_t Now() { return time_ns += 1'000'000; }

  std::vector<std::string> names;
  std::unique_ptr<Pipeline> pipeline;
  CountingSink sink;
  int64_t time_ns = 1'700'000'000'000'000'000;
  double bytes_per_channel = 0;
  double heap_bytes_per_channel = 0;
  int every = 100;
};

Fleet& FleetOf(std::size_t n, int every_n) {
  static std::unique_ptr<Fleet> fleet;
  if (!fleet || fleet->names.size() != n || fleet->every != every_n) {
    fleet.reset();  // free the previous one before building the next
    fleet = std::make_unique<Fleet>(n, every_n);
  }
  return *fleet;
}

void BM_ProcessGaussian(benchmark::State& state) {
  const auto n = static_cast<std::size_t>(state.range(0));
  Fleet& fleet = FleetOf(n, static_cast<int>(state.range(1)));
  bayline::v1::Observation obs;
  std::size_t index = 0;
  constexpr std::size_t kStride = 1'000'003;  // prime: visits every channel, in cache-hostile order
  double y = 0;
  const long allocations_before = g_allocations;
  for (auto _ : state) {
    index = (index + kStride) % n;
    obs.set_channel(fleet.names[index]);
    y = y > 1.0 ? 0.0 : y + 0.013;
    obs.set_y(-18.0 + y);
    fleet.pipeline->Process(obs, fleet.Now(), fleet.sink);
  }
  state.counters["allocs_per_call"] = static_cast<double>(g_allocations - allocations_before) /
                                      static_cast<double>(state.iterations());
  state.counters["bytes_per_channel"] = fleet.bytes_per_channel;
  state.counters["heap_bytes_per_channel"] = fleet.heap_bytes_per_channel;
  state.counters["channels"] = static_cast<double>(fleet.pipeline->counters().channels);
  state.counters["rejected"] = static_cast<double>(fleet.pipeline->counters().rejected_total);
}
// BM_ProcessGaussianBatch/channels:C/batched:B: the same load in batches of 100 observations
// (filled into one reused message, as the daemon's workers receive them); B = 0 calls Process for
// each observation of the batch, B = 1 calls ProcessBatch once. Time is per batch of 100;
// items_per_second counts observations.
void BM_ProcessGaussianBatch(benchmark::State& state) {
  const auto n = static_cast<std::size_t>(state.range(0));
  const bool batched = state.range(1) != 0;
  Fleet& fleet = FleetOf(n, 100);
  constexpr int kBatch = 100;
  bayline::v1::ObservationBatch batch;
  for (int i = 0; i < kBatch; ++i) batch.add_observations();
  std::vector<int64_t> arrival(kBatch);
  std::size_t index = 0;
  constexpr std::size_t kStride = 1'000'003;
  double y = 0;
  for (auto _ : state) {
    for (int i = 0; i < kBatch; ++i) {
      index = (index + kStride) % n;
      auto* obs = batch.mutable_observations(i);
      obs->set_channel(fleet.names[index]);
      y = y > 1.0 ? 0.0 : y + 0.013;
      obs->set_y(-18.0 + y);
      arrival[static_cast<std::size_t>(i)] = fleet.Now();
    }
    if (batched) {
      fleet.pipeline->ProcessBatch(batch.observations(), arrival, fleet.sink);
    } else {
      for (int i = 0; i < kBatch; ++i) {
        fleet.pipeline->Process(batch.observations(i), arrival[static_cast<std::size_t>(i)],
                                fleet.sink);
      }
    }
  }
  state.SetItemsProcessed(static_cast<int64_t>(state.iterations()) * kBatch);
  state.counters["rejected"] = static_cast<double>(fleet.pipeline->counters().rejected_total);
}

BENCHMARK(BM_ProcessGaussian)
    ->ArgNames({"channels", "every_n"})
    ->Args({1, 100})
    ->Args({10'000, 100})
    ->Args({1'000'000, 100})
    ->Args({10'000, 1})
    ->Unit(benchmark::kNanosecond);
BENCHMARK(BM_ProcessGaussianBatch)
    ->ArgNames({"channels", "batched"})
    ->Args({10'000, 0})
    ->Args({10'000, 1})
    ->Args({1'000'000, 0})
    ->Args({1'000'000, 1})
    ->Unit(benchmark::kMicrosecond);

}  // namespace
}  // namespace bayline::pipeline
