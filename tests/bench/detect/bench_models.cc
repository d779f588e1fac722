// Cost per observation of the model-based detectors. BOCPD also reports the mean number of retained
// run lengths (counter "runs"), which is what its cost scales with.
#include <benchmark/benchmark.h>

#include <cmath>
#include <random>
#include <vector>

#include "estimators/detect/band.h"
#include "estimators/detect/bocpd.h"
#include "estimators/detect/recursive_residual_tests.h"

namespace bayline::est {
namespace {

// Pre-drawn in-control data with a mean step every 2000 observations, cycled.
std::vector<double> Data(std::size_t n) {
  std::mt19937_64 rng(1);
  std::normal_distribution<double> n01;
  std::vector<double> y(n);
  for (std::size_t i = 0; i < n; ++i) y[i] = ((i / 2000) % 2 ? 2.0 : 0.0) + n01(rng);
  return y;
}

// args: 1/hazard, max_run_lengths, -log10(prune_epsilon)
void BM_BocpdNormalGamma(benchmark::State& st) {
  Bocpd::Options o;
  o.hazard = 1.0 / static_cast<double>(st.range(0));
  o.max_run_lengths = static_cast<int>(st.range(1));
  o.prune_epsilon = std::pow(10.0, -static_cast<double>(st.range(2)));
  o.prior_kappa = 0.1;
  o.prior_shape = 2;
  o.prior_rate = 2;
  Bocpd d(o);
  const std::vector<double> y = Data(1 << 16);
  std::size_t i = 0;
  double runs = 0;
  std::int64_t n = 0;
  Sample s;
  DetectorEvent ev;
  for (auto _ : st) {
    s.y = y[i++ & (y.size() - 1)];
    benchmark::DoNotOptimize(d.Update(s, {n, 0.0}, &ev));
    runs += static_cast<double>(d.state().runs.size());
    ++n;
  }
  st.counters["runs"] = runs / static_cast<double>(n);
}
// Defaults (cap 300, epsilon 1e-5), then a larger cap with stronger and with negligible pruning.
BENCHMARK(BM_BocpdNormalGamma)
    ->Args({100, 300, 5})
    ->Args({1000, 300, 5})
    ->Args({100, 1000, 4})
    ->Args({1000, 1000, 4})
    ->Args({100, 1000, 10})
    ->Args({1000, 1000, 10});

void BM_BocpdGammaPoisson(benchmark::State& st) {
  Bocpd::Options o;
  o.model = BocpdModel::kGammaPoisson;
  o.hazard = 1.0 / static_cast<double>(st.range(0));
  o.max_run_lengths = static_cast<int>(st.range(1));
  o.prune_epsilon = std::pow(10.0, -static_cast<double>(st.range(2)));
  Bocpd d(o);
  std::mt19937_64 rng(2);
  std::vector<double> y(1 << 16);
  for (std::size_t i = 0; i < y.size(); ++i)
    y[i] = std::poisson_distribution<int>((i / 2000) % 2 ? 6.0 : 4.0)(rng);
  std::size_t i = 0;
  double runs = 0;
  std::int64_t n = 0;
  Sample s;
  DetectorEvent ev;
  for (auto _ : st) {
    s.y = y[i++ & (y.size() - 1)];
    benchmark::DoNotOptimize(d.Update(s, {n, 0.0}, &ev));
    runs += static_cast<double>(d.state().runs.size());
    ++n;
  }
  st.counters["runs"] = runs / static_cast<double>(n);
}
BENCHMARK(BM_BocpdGammaPoisson)->Args({100, 300, 5})->Args({1000, 300, 5});

void BM_RecursiveCusum(benchmark::State& st) {
  RecursiveCusum d(RecursiveCusum::Options{});
  const std::vector<double> w = Data(1 << 16);
  std::size_t i = 0;
  std::int64_t n = 0;
  DetectorEvent ev;
  for (auto _ : st) benchmark::DoNotOptimize(d.Update(w[i++ & (w.size() - 1)], {n++, 0.0}, &ev));
}
BENCHMARK(BM_RecursiveCusum);

void BM_RecursiveCusumSquares(benchmark::State& st) {
  RecursiveCusumSquares d(RecursiveCusumSquares::Options{});
  const std::vector<double> w = Data(1 << 16);
  std::size_t i = 0;
  std::int64_t n = 0;
  DetectorEvent ev;
  for (auto _ : st) benchmark::DoNotOptimize(d.Update(w[i++ & (w.size() - 1)], {n++, 0.0}, &ev));
}
BENCHMARK(BM_RecursiveCusumSquares);

void BM_ToleranceBand(benchmark::State& st) {
  ToleranceBand::Options o;
  o.lo = 0.98;
  o.hi = 1.02;
  o.hysteresis = 0.002;
  ToleranceBand d(o);
  const std::vector<double> v = Data(1 << 16);
  ParameterReport rep;
  rep.value = {1.0};
  rep.std_error = {0.005};
  rep.lower = {0.99};
  rep.upper = {1.01};
  rep.identifiable = true;
  std::size_t i = 0;
  std::int64_t n = 0;
  DetectorEvent ev;
  for (auto _ : st) {
    const double g = 1.0 + 0.02 * v[i++ & (v.size() - 1)];
    rep.value[0] = g;
    rep.lower[0] = g - 0.01;
    rep.upper[0] = g + 0.01;
    benchmark::DoNotOptimize(d.Update(rep, {n++, 0.0}, &ev));
  }
}
BENCHMARK(BM_ToleranceBand);

}  // namespace
}  // namespace bayline::est
