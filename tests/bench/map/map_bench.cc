// Cost of one posterior update (with its one-step innovation) for each map estimator.
// Run: build-map/tests/bench/map/bayline_bench_map --benchmark_min_time=0.2
#include <benchmark/benchmark.h>

#include <random>
#include <vector>

#include "estimators/map/beta_binomial.h"
#include "estimators/map/dynamic_linear_model.h"
#include "estimators/map/gamma_exponential.h"
#include "estimators/map/gamma_poisson.h"
#include "estimators/map/nig_regression.h"
#include "estimators/map/normal_gamma.h"

namespace {

using namespace bayline::est;

constexpr int kRows = 4096;  // pre-generated observations, cycled

struct Rows {
  std::vector<double> x, y;
  int p;
};

Rows MakeRows(int p) {
  std::mt19937_64 rng(1);
  std::normal_distribution<double> N(0, 1);
  Rows r{std::vector<double>(kRows * p), std::vector<double>(kRows), p};
  for (int i = 0; i < kRows; ++i) {
    double y = 0;
    for (int j = 0; j < p; ++j) {
      r.x[i * p + j] = j == 0 ? 1.0 : N(rng);
      y += (j + 1) * r.x[i * p + j];
    }
    r.y[i] = y + N(rng);
  }
  return r;
}

template <typename Est>
void RunRegression(benchmark::State& state, Est& est, const Rows& rows) {
  int i = 0;
  Innovation inn;
  for (auto _ : state) {
    Sample s;
    s.y = rows.y[i];
    s.x = std::span<const double>(rows.x.data() + i * rows.p, rows.p);
    benchmark::DoNotOptimize(est.Update(s, &inn).ok());
    benchmark::DoNotOptimize(inn.standardized);
    if (++i == kRows) i = 0;
  }
}

template <int P>
void BM_NigRegression(benchmark::State& state) {
  const int p = P == Eigen::Dynamic ? static_cast<int>(state.range(0)) : P;
  typename NigRegression<P>::Options o;
  o.p = p;
  if (state.range(1) != 0) o.discount.lambda = 0.99;
  NigRegression<P> est(o);
  RunRegression(state, est, MakeRows(p));
}
BENCHMARK(BM_NigRegression<1>)->ArgNames({"p", "discount"})->Args({1, 0});
BENCHMARK(BM_NigRegression<2>)->ArgNames({"p", "discount"})->Args({2, 0})->Args({2, 1});
BENCHMARK(BM_NigRegression<4>)->ArgNames({"p", "discount"})->Args({4, 0})->Args({4, 1});
BENCHMARK(BM_NigRegression<Eigen::Dynamic>)
    ->ArgNames({"p", "discount"})
    ->Args({4, 0})
    ->Args({16, 0});

template <int P>
void BM_DynamicLinearModel(benchmark::State& state) {
  const int p = P == Eigen::Dynamic ? static_cast<int>(state.range(0)) : P;
  typename DynamicLinearModel<P>::Options o;
  o.p = p;
  o.state_variance.assign(p, 1e-4);
  DynamicLinearModel<P> est(o);
  RunRegression(state, est, MakeRows(p));
}
BENCHMARK(BM_DynamicLinearModel<2>)->ArgNames({"p"})->Arg(2);
BENCHMARK(BM_DynamicLinearModel<4>)->ArgNames({"p"})->Arg(4);
BENCHMARK(BM_DynamicLinearModel<Eigen::Dynamic>)->ArgNames({"p"})->Arg(4)->Arg(16);

template <typename Est, typename Fill>
void RunScalar(benchmark::State& state, Est& est, Fill fill) {
  std::mt19937_64 rng(2);
  std::vector<Sample> samples(kRows);
  for (Sample& s : samples) fill(s, rng);
  int i = 0;
  Innovation inn;
  for (auto _ : state) {
    benchmark::DoNotOptimize(est.Update(samples[i], &inn).ok());
    benchmark::DoNotOptimize(inn.standardized);
    if (++i == kRows) i = 0;
  }
}

void BM_NormalGamma(benchmark::State& state) {
  NormalGamma est(NormalGamma::Options{});
  RunScalar(state, est, [](Sample& s, std::mt19937_64& rng) {
    s.y = std::normal_distribution<double>(5, 2)(rng);
  });
}
BENCHMARK(BM_NormalGamma);

void BM_BetaBinomial(benchmark::State& state) {
  BetaBinomial est(BetaBinomial::Options{});
  RunScalar(state, est, [](Sample& s, std::mt19937_64& rng) {
    s.trials = 20;
    s.y = std::binomial_distribution<int>(20, 0.3)(rng);
  });
}
BENCHMARK(BM_BetaBinomial);

void BM_GammaPoisson(benchmark::State& state) {
  GammaPoisson est(GammaPoisson::Options{});
  RunScalar(state, est, [](Sample& s, std::mt19937_64& rng) {
    s.exposure = 2.0;
    s.y = std::poisson_distribution<int>(7.0)(rng);
  });
}
BENCHMARK(BM_GammaPoisson);

void BM_GammaExponential(benchmark::State& state) {
  GammaExponential est(GammaExponential::Options{});
  RunScalar(state, est, [](Sample& s, std::mt19937_64& rng) {
    s.y = std::exponential_distribution<double>(0.5)(rng);
  });
}
BENCHMARK(BM_GammaExponential);

}  // namespace
