// The update path allocates nothing (DEVELOPERS.md): every malloc in this test binary is counted by
// interposing glibc's malloc family (the executable's definitions take precedence over libc's),
// and the count must not move across a run of updates with innovations.
#include <gtest/gtest.h>

#include <cstddef>
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
std::size_t g_mallocs = 0;
}

extern "C" {
void* __libc_malloc(std::size_t);
void* __libc_calloc(std::size_t, std::size_t);
void* __libc_realloc(void*, std::size_t);
void* __libc_memalign(std::size_t, std::size_t);
void* malloc(std::size_t n) {
  ++g_mallocs;
  return __libc_malloc(n);
}
void* calloc(std::size_t n, std::size_t m) {
  ++g_mallocs;
  return __libc_calloc(n, m);
}
void* realloc(void* p, std::size_t n) {
  ++g_mallocs;
  return __libc_realloc(p, n);
}
void* aligned_alloc(std::size_t a, std::size_t n) {
  ++g_mallocs;
  return __libc_memalign(a, n);
}
}

namespace bayline::est {
namespace {

template <typename Est>
std::size_t MallocsDuring(Est& est, const std::vector<Sample>& samples) {
  Innovation inn;
  const std::size_t before = g_mallocs;
  for (const Sample& s : samples) {
    if (!est.Update(s, &inn).ok()) return static_cast<std::size_t>(-1);
  }
  return g_mallocs - before;
}

std::vector<Sample> Positive(int n) {
  std::mt19937_64 rng(81);
  std::gamma_distribution<double> gd(2.0, 1.0);
  std::vector<Sample> v(n);
  for (auto& s : v) {
    s.y = 1.0 + gd(rng);
    s.trials = 10;
  }
  return v;
}

TEST(NoAllocationTest, ScalarFamiliesDoNotAllocateWhileUpdating) {
  const std::vector<Sample> data = Positive(500);
  std::vector<Sample> counts = data;
  for (auto& s : counts) s.y = static_cast<double>(static_cast<int>(s.y));  // whole, <= 10
  MlOptions o;
  o.forgetting.lambda = 0.99;
  GaussianMl g(o);
  LognormalMl l(o);
  PoissonMl p(o);
  BinomialMl b(o);
  ExponentialMl e(o);
  GammaMl ga(o);
  // Sanity: the counter sees allocations at all.
  const std::size_t before = g_mallocs;
  std::vector<double>* probe = new std::vector<double>(100);
  EXPECT_GT(g_mallocs, before);
  delete probe;
  EXPECT_EQ(MallocsDuring(g, data), 0u);
  EXPECT_EQ(MallocsDuring(l, data), 0u);
  EXPECT_EQ(MallocsDuring(p, counts), 0u);
  EXPECT_EQ(MallocsDuring(b, counts), 0u);
  EXPECT_EQ(MallocsDuring(e, data), 0u);
  EXPECT_EQ(MallocsDuring(ga, data), 0u);
}

TEST(NoAllocationTest, RegressionDoesNotAllocateDuringOrAfterStartUp) {
  std::mt19937_64 rng(82);
  std::normal_distribution<double> z;
  const int n = 400, p = 3;
  std::vector<double> x(n * p);
  std::vector<Sample> samples(n);
  for (int i = 0; i < n; ++i) {
    x[i * p] = 1;
    x[i * p + 1] = z(rng);
    x[i * p + 2] = z(rng);
    samples[i].x = std::span<const double>(x.data() + i * p, p);
    samples[i].y = (x[i * p + 1] + z(rng)) > 0 ? 1 : 0;
  }
  GlmMlOptions o;
  o.num_regressors = p;
  o.forgetting.lambda = 0.995;
  LogisticRegressionMl logit(o);
  PoissonRegressionMl pois(o);
  EXPECT_EQ(MallocsDuring(logit, samples), 0u);  // includes the start-up fit at row 30
  EXPECT_EQ(MallocsDuring(pois, samples), 0u);
  EXPECT_TRUE(logit.Report().identifiable);
}

}  // namespace
}  // namespace bayline::est
