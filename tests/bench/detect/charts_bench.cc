// Per-observation cost of the control charts and standardizers (ns per update).
//   build-charts/tests/bench/detect/bayline_bench_charts --benchmark_min_time=0.5
#include <benchmark/benchmark.h>

#include <random>
#include <vector>

#include "estimators/detect/cusum.h"
#include "estimators/detect/ewma.h"
#include "estimators/detect/glr.h"
#include "estimators/detect/page_hinkley.h"
#include "estimators/detect/self_starting.h"

namespace bayline::est {
namespace {

// In-control standard normal inputs, cycled (a power of two so the index is a mask).
const std::vector<double>& Inputs() {
  static const std::vector<double> z = [] {
    std::mt19937_64 rng(42);
    std::normal_distribution<double> normal(0.0, 1.0);
    std::vector<double> v(1 << 14);
    for (double& x : v) x = normal(rng);
    return v;
  }();
  return z;
}

template <typename Chart, typename Options>
void RunChart(benchmark::State& state, const Options& o) {
  Chart chart(o);
  const auto& z = Inputs();
  const std::size_t mask = z.size() - 1;
  std::size_t i = 0;
  for (auto _ : state) {
    DetectorEvent e =
        chart.Update(z[i++ & mask], ObservationMark{static_cast<std::int64_t>(i), 0.0});
    benchmark::DoNotOptimize(e);
  }
  state.SetItemsProcessed(state.iterations());
}

// The harness alone (input fetch, event construction, DoNotOptimize): subtract from the charts.
void BM_HarnessBaseline(benchmark::State& state) {
  const auto& z = Inputs();
  const std::size_t mask = z.size() - 1;
  std::size_t i = 0;
  for (auto _ : state) {
    DetectorEvent e;
    e.statistic = z[i++ & mask];
    benchmark::DoNotOptimize(e);
  }
  state.SetItemsProcessed(state.iterations());
}
BENCHMARK(BM_HarnessBaseline);

void BM_Cusum(benchmark::State& state) {
  CusumOptions o;  // k = 0.5, h = 5: ARL0 465
  RunChart<Cusum>(state, o);
}
BENCHMARK(BM_Cusum);

void BM_EwmaExactLimits(benchmark::State& state) {
  EwmaOptions o;  // lambda 0.1, L 2.814
  RunChart<Ewma>(state, o);
}
BENCHMARK(BM_EwmaExactLimits);

void BM_EwmaAsymptoticLimits(benchmark::State& state) {
  EwmaOptions o;
  o.limits = EwmaLimits::kAsymptotic;
  RunChart<Ewma>(state, o);
}
BENCHMARK(BM_EwmaAsymptoticLimits);

void BM_PageHinkley(benchmark::State& state) {
  PageHinkleyOptions o;
  o.threshold = 12.0;
  RunChart<PageHinkley>(state, o);
}
BENCHMARK(BM_PageHinkley);

void BM_Glr(benchmark::State& state) {
  GlrOptions o;
  o.window = state.range(0);
  o.threshold = 7.0;
  RunChart<Glr>(state, o);
}
BENCHMARK(BM_Glr)->Arg(50)->Arg(200);

void BM_SelfStartingStandardizer(benchmark::State& state) {
  SelfStartingStandardizer s;
  const auto& z = Inputs();
  const std::size_t mask = z.size() - 1;
  std::size_t i = 0;
  double out = 0;
  for (double v : z) (void)s.Update(10.0 + v, &out);  // finite input, never rejected; warm-up
  for (auto _ : state) {
    (void)s.Update(10.0 + z[i++ & mask], &out);  // finite input, never rejected
    benchmark::DoNotOptimize(out);
  }
  state.SetItemsProcessed(state.iterations());
}
BENCHMARK(BM_SelfStartingStandardizer);

void BM_RecursiveResidualStandardizer(benchmark::State& state) {
  RecursiveResidualStandardizer s;
  const auto& z = Inputs();
  const std::size_t mask = z.size() - 1;
  std::size_t i = 0;
  double out = 0;
  for (double v : z) (void)s.Update(v, &out);  // finite input, never rejected; warm-up
  for (auto _ : state) {
    (void)s.Update(z[i++ & mask], &out);  // finite input, never rejected
    benchmark::DoNotOptimize(out);
  }
  state.SetItemsProcessed(state.iterations());
}
BENCHMARK(BM_RecursiveResidualStandardizer);

}  // namespace
}  // namespace bayline::est
