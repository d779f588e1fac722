// ns per update of recursive least squares. Rows are precomputed (seeded) so only the update is
// timed. Run: build-ls/tests/bench/ls/bayline_bench_ls --benchmark_min_time=0.2
#include <benchmark/benchmark.h>

#include <random>
#include <vector>

#include "estimators/ls/linear_ml.h"
#include "estimators/ls/recursive_least_squares.h"
#include "estimators/ls/rls.h"

namespace bayline::est {
namespace {

constexpr int kRows = 4096;  // cycled; power of two

struct Rows {
  std::vector<double> x, y;
  int p;
  Rows(int p_, std::uint64_t seed) : x(static_cast<std::size_t>(kRows * p_)), y(kRows), p(p_) {
    std::mt19937_64 rng(seed);
    std::normal_distribution<double> g;
    for (int i = 0; i < kRows; ++i) {
      double acc = 0;
      for (int j = 0; j < p; ++j) {
        const double v = j == 0 ? 1.0 : g(rng);
        x[static_cast<std::size_t>(i * p + j)] = v;
        acc += (j + 1) * v;
      }
      y[static_cast<std::size_t>(i)] = acc + 0.1 * g(rng);
    }
  }
  Sample At(long i) const {
    const auto k = static_cast<std::size_t>(i & (kRows - 1));
    Sample s;
    s.y = y[k];
    s.x = std::span<const double>(x.data() + k * static_cast<std::size_t>(p),
                                  static_cast<std::size_t>(p));
    return s;
  }
};

RlsOptions Opt(double lambda, bool extended = false, bool robust = false) {
  RlsOptions o;
  o.forgetting.lambda = lambda;
  o.extended_precision = extended;
  o.robust = robust;
  return o;
}

template <typename Est>
void Run(benchmark::State& state, Est& est, const Rows& rows, bool with_outputs) {
  long i = 0;
  Innovation inn;
  RecursiveResidual rr;
  for (auto _ : state) {
    Status st = with_outputs ? est.Update(rows.At(i++), &inn, &rr) : est.Update(rows.At(i++));
    benchmark::DoNotOptimize(st);
    benchmark::DoNotOptimize(inn);
  }
  state.SetItemsProcessed(state.iterations());
}

// Args: forget (0: lambda = 1, 1: lambda = 0.99 with the windup anchor), out (0: update only,
// 1: also fill Innovation and RecursiveResidual).
template <int P>
void BM_RlsFixed(benchmark::State& state) {
  const Rows rows(P, 1);
  RecursiveLeastSquares<P> est(Opt(state.range(0) ? 0.99 : 1.0));
  Run(state, est, rows, state.range(1) != 0);
}
BENCHMARK_TEMPLATE(BM_RlsFixed, 1)->ArgNames({"forget", "out"})->ArgsProduct({{0, 1}, {0, 1}});
BENCHMARK_TEMPLATE(BM_RlsFixed, 2)->ArgNames({"forget", "out"})->ArgsProduct({{0, 1}, {0, 1}});
BENCHMARK_TEMPLATE(BM_RlsFixed, 4)->ArgNames({"forget", "out"})->ArgsProduct({{0, 1}, {0, 1}});
BENCHMARK_TEMPLATE(BM_RlsFixed, 8)->ArgNames({"forget", "out"})->ArgsProduct({{0, 1}, {0, 1}});

void BM_RlsDynamic(benchmark::State& state) {
  const int p = static_cast<int>(state.range(0));
  const Rows rows(p, 2);
  RecursiveLeastSquares<Eigen::Dynamic> est(Opt(state.range(1) ? 0.99 : 1.0), p);
  Run(state, est, rows, state.range(2) != 0);
}
BENCHMARK(BM_RlsDynamic)
    ->ArgNames({"p", "forget", "out"})
    ->ArgsProduct({{1, 2, 4, 8, 16}, {0, 1}, {0, 1}});

void BM_RlsRuntimeP(benchmark::State& state) {
  const int p = static_cast<int>(state.range(0));
  const Rows rows(p, 3);
  Rls est(Opt(1.0), p);
  Run(state, est, rows, true);
}
BENCHMARK(BM_RlsRuntimeP)->ArgName("p")->Arg(2)->Arg(4)->Arg(16);

void BM_RlsExtended(benchmark::State& state) {
  const int p = static_cast<int>(state.range(0));
  const Rows rows(p, 4);
  Rls est(Opt(1.0, true), p);
  Run(state, est, rows, true);
}
BENCHMARK(BM_RlsExtended)->ArgName("p")->Arg(2)->Arg(4)->Arg(8)->Arg(16);

void BM_RlsRobust(benchmark::State& state) {
  const int p = static_cast<int>(state.range(0));
  const Rows rows(p, 5);
  Rls est(Opt(1.0, false, true), p);
  Run(state, est, rows, true);
}
BENCHMARK(BM_RlsRobust)->ArgName("p")->Arg(2)->Arg(4);

void BM_LinearMl(benchmark::State& state) {
  const int p = static_cast<int>(state.range(0));
  const Rows rows(p, 6);
  LinearMl est(Opt(1.0), p);
  long i = 0;
  Innovation inn;
  for (auto _ : state) {
    Status st = est.Update(rows.At(i++), &inn);
    benchmark::DoNotOptimize(st);
    benchmark::DoNotOptimize(inn);
  }
  state.SetItemsProcessed(state.iterations());
}
BENCHMARK(BM_LinearMl)->ArgName("p")->Arg(2)->Arg(4);

}  // namespace
}  // namespace bayline::est
