// ns per Update() for each online maximum-likelihood family, on pre-generated samples (the cost of
// drawing random numbers is outside the timed loop). Innovations are requested, as the daemon does.
#include <benchmark/benchmark.h>

#include <cmath>
#include <random>
#include <vector>

#include "estimators/ml/binomial_ml.h"
#include "estimators/ml/exponential_ml.h"
#include "estimators/ml/gamma_ml.h"
#include "estimators/ml/gaussian_ml.h"
#include "estimators/ml/glm_ml.h"
#include "estimators/ml/lognormal_ml.h"
#include "estimators/ml/poisson_ml.h"

namespace {

using namespace bayline::est;
constexpr std::size_t kSamples = 4096;  // power of two: index by mask

template <typename Est, typename Gen>
void RunScalar(benchmark::State& state, Est est, Gen gen) {
  std::mt19937_64 rng(99);
  std::vector<Sample> samples(kSamples);
  for (auto& s : samples) s = gen(rng);
  for (const auto& s : samples) (void)est.Update(s);  // warm-up; generated samples are valid
  Innovation inn;
  std::size_t i = 0;
  for (auto _ : state) {
    benchmark::DoNotOptimize(est.Update(samples[i++ & (kSamples - 1)], &inn).ok());
    benchmark::DoNotOptimize(inn);
  }
  state.SetItemsProcessed(state.iterations());
}

MlOptions Forgetting() {
  MlOptions o;
  o.forgetting.lambda = 0.999;
  return o;
}

void BM_Gaussian(benchmark::State& st) {
  RunScalar(st, GaussianMl(Forgetting()), [](std::mt19937_64& r) {
    Sample s;
    s.y = std::normal_distribution<double>(5, 2)(r);
    return s;
  });
}
void BM_Lognormal(benchmark::State& st) {
  RunScalar(st, LognormalMl(Forgetting()), [](std::mt19937_64& r) {
    Sample s;
    s.y = std::lognormal_distribution<double>(1, 0.5)(r);
    return s;
  });
}
void BM_Poisson(benchmark::State& st) {
  RunScalar(st, PoissonMl(Forgetting()), [](std::mt19937_64& r) {
    Sample s;
    s.exposure = std::uniform_real_distribution<double>(0.5, 2)(r);
    s.y = std::poisson_distribution<int>(3 * s.exposure)(r);
    return s;
  });
}
void BM_Binomial(benchmark::State& st) {
  RunScalar(st, BinomialMl(Forgetting()), [](std::mt19937_64& r) {
    Sample s;
    s.trials = 10;
    s.y = std::binomial_distribution<int>(10, 0.3)(r);
    return s;
  });
}
void BM_Exponential(benchmark::State& st) {
  RunScalar(st, ExponentialMl(Forgetting()), [](std::mt19937_64& r) {
    Sample s;
    s.y = std::exponential_distribution<double>(0.5)(r);
    return s;
  });
}
void BM_Gamma(benchmark::State& st) {
  RunScalar(st, GammaMl(Forgetting()), [](std::mt19937_64& r) {
    Sample s;
    s.y = std::gamma_distribution<double>(2.5, 1.0)(r);
    return s;
  });
}

template <typename Est>
void RunGlm(benchmark::State& state, bool poisson) {
  const int p = static_cast<int>(state.range(0));
  GlmMlOptions o;
  o.num_regressors = static_cast<std::size_t>(p);
  o.forgetting.lambda = 0.999;
  Est est(o);
  std::mt19937_64 rng(98);
  std::normal_distribution<double> z;
  std::vector<double> x(kSamples * p);
  std::vector<Sample> samples(kSamples);
  for (std::size_t i = 0; i < kSamples; ++i) {
    double eta = 0.2;
    x[i * p] = 1.0;
    for (int j = 1; j < p; ++j) {
      x[i * p + j] = 0.5 * z(rng);
      eta += 0.3 * x[i * p + j];
    }
    Sample& s = samples[i];
    s.x = std::span<const double>(x.data() + i * p, static_cast<std::size_t>(p));
    if (poisson) {
      s.exposure = 2.0;
      s.y = std::poisson_distribution<int>(2.0 * std::exp(eta))(rng);
    } else {
      s.trials = 1;
      s.y = std::bernoulli_distribution(1 / (1 + std::exp(-eta)))(rng) ? 1 : 0;
    }
  }
  for (const auto& s : samples) (void)est.Update(s);  // past the start-up fit; samples are valid
  Innovation inn;
  std::size_t i = 0;
  for (auto _ : state) {
    benchmark::DoNotOptimize(est.Update(samples[i++ & (kSamples - 1)], &inn).ok());
    benchmark::DoNotOptimize(inn);
  }
  state.SetItemsProcessed(state.iterations());
}
void BM_LogisticRegression(benchmark::State& st) { RunGlm<LogisticRegressionMl>(st, false); }
void BM_PoissonRegression(benchmark::State& st) { RunGlm<PoissonRegressionMl>(st, true); }

BENCHMARK(BM_Gaussian);
BENCHMARK(BM_Lognormal);
BENCHMARK(BM_Poisson);
BENCHMARK(BM_Binomial);
BENCHMARK(BM_Exponential);
BENCHMARK(BM_Gamma);
BENCHMARK(BM_LogisticRegression)->Arg(2)->Arg(4)->Arg(8);
BENCHMARK(BM_PoissonRegression)->Arg(2)->Arg(4)->Arg(8);

}  // namespace
