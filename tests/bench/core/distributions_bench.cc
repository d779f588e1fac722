// Cost of the distribution functions on the daemon's hot paths (ns per call):
//   BM_StudentTNormalScore/dof:D     Phi^{-1}(F_t(t; D)) for t cycled over standard normal draws
//                                    (the per-observation score of standardizers and map models)
//   BM_StudentTQuantile/dof:D        t quantile at p = 0.975 (every published t interval)
//   BM_GammaQuantile/p:P/shape:A     gamma quantile at p = P / 1000 (variance and rate intervals)
//   BM_StudentTQuantileRepeated      the same t quantile asked again: a hit in the per-thread memo
// The quantile benchmarks cycle the parameter over 65,536 values within 1e-6 relative of D (resp.
// A), so each call misses the 2,048-slot memo (core/quantile_memo.h) and measures the computation.
// Run: build-num/tests/bench/core/bayline_bench_distributions --benchmark_min_time=0.5
#include <benchmark/benchmark.h>

#include <cstdint>
#include <random>
#include <vector>

#include "estimators/core/distributions.h"

namespace bayline::est {
namespace {

// The degrees of freedom / shapes measured: a young channel, typical ones, and old channels.
const std::vector<std::int64_t> kSizes = {3, 30, 300, 10000, 1000000};

// Standard normal draws, cycled (a power of two so the index is a mask); t values near the bulk.
const std::vector<double>& Inputs() {
  static const std::vector<double> v = [] {
    std::mt19937_64 rng(42);
    std::normal_distribution<double> normal(0.0, 1.0);
    std::vector<double> x(1 << 12);
    for (double& t : x) t = normal(rng);
    return x;
  }();
  return v;
}

void BM_StudentTNormalScore(benchmark::State& state) {
  const double dof = static_cast<double>(state.range(0));
  const auto& t = Inputs();
  const std::size_t mask = t.size() - 1;
  std::size_t i = 0;
  for (auto _ : state) {
    double z = dist::StudentTNormalScore(t[i++ & mask], dof);
    benchmark::DoNotOptimize(z);
  }
  state.SetItemsProcessed(state.iterations());
}
BENCHMARK(BM_StudentTNormalScore)->ArgName("dof")->ArgsProduct({kSizes});

// 65,536 distinct parameters within 1e-6 relative of `center` (more keys than memo slots).
std::vector<double> NearbyParameters(double center) {
  std::vector<double> v(1 << 16);
  for (std::size_t i = 0; i < v.size(); ++i)
    v[i] = center * (1.0 + 1.5e-11 * static_cast<double>(i));
  return v;
}

void BM_StudentTQuantile(benchmark::State& state) {
  const std::vector<double> dofs = NearbyParameters(static_cast<double>(state.range(0)));
  double p = 0.975;
  std::size_t i = 0;
  for (auto _ : state) {
    benchmark::DoNotOptimize(p);
    double x = dist::StudentTQuantile(p, dofs[i++ & 0xFFFF]);
    benchmark::DoNotOptimize(x);
  }
  state.SetItemsProcessed(state.iterations());
}
BENCHMARK(BM_StudentTQuantile)->ArgName("dof")->ArgsProduct({kSizes});

void BM_StudentTQuantileRepeated(benchmark::State& state) {
  double dof = 30.0, p = 0.975;
  for (auto _ : state) {
    benchmark::DoNotOptimize(p);
    benchmark::DoNotOptimize(dof);
    double x = dist::StudentTQuantile(p, dof);
    benchmark::DoNotOptimize(x);
  }
  state.SetItemsProcessed(state.iterations());
}
BENCHMARK(BM_StudentTQuantileRepeated);

void BM_GammaQuantile(benchmark::State& state) {
  double p = static_cast<double>(state.range(0)) / 1000.0;
  const std::vector<double> shapes = NearbyParameters(static_cast<double>(state.range(1)));
  std::size_t i = 0;
  for (auto _ : state) {
    benchmark::DoNotOptimize(p);
    double x = dist::GammaQuantile(p, shapes[i++ & 0xFFFF], 1.0);
    benchmark::DoNotOptimize(x);
  }
  state.SetItemsProcessed(state.iterations());
}
BENCHMARK(BM_GammaQuantile)->ArgNames({"p", "shape"})->ArgsProduct({{25, 975}, kSizes});

}  // namespace
}  // namespace bayline::est
