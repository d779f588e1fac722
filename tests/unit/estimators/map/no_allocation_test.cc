// The update path allocates no heap memory for the scalar posteriors and the fixed-size regression
// and tracker (DEVELOPERS.md). Every allocation in this executable goes through malloc (operator
// new in libstdc++ and Eigen's aligned allocator both call it), so malloc is interposed here and
// counts calls while a test enables counting. glibc-specific (__libc_malloc), like the Debian
// target; this file is its own test executable so the interposition touches nothing else.
#include <gtest/gtest.h>

#include <cstddef>
#include <cstdlib>
#include <random>
#include <vector>

#include "estimators/map/beta_binomial.h"
#include "estimators/map/dynamic_linear_model.h"
#include "estimators/map/gamma_exponential.h"
#include "estimators/map/gamma_poisson.h"
#include "estimators/map/nig_regression.h"
#include "estimators/map/normal_gamma.h"

extern "C" void* __libc_malloc(std::size_t);

namespace {
bool g_counting = false;
long g_allocations = 0;
}  // namespace

extern "C" void* malloc(std::size_t n) {
  if (g_counting) ++g_allocations;
  return __libc_malloc(n);
}

namespace bayline::est {
namespace {

// Counts heap allocations made by `body`.
template <typename F>
long CountAllocations(F body) {
  g_allocations = 0;
  g_counting = true;
  body();
  g_counting = false;
  return g_allocations;
}

template <typename Est>
long RegressionUpdates(Est& est, int p) {
  std::mt19937_64 rng(1);
  std::normal_distribution<double> N(0, 1);
  std::vector<double> x(p * 200), y(200);
  for (double& v : x) v = N(rng);
  for (double& v : y) v = N(rng);
  return CountAllocations([&] {
    for (int i = 0; i < 200; ++i) {
      Sample s;
      s.y = y[i];
      s.x = std::span<const double>(x.data() + i * p, p);
      s.time = i;
      Innovation inn;
      ASSERT_TRUE(est.Update(s, &inn).ok());
    }
  });
}

TEST(NoAllocationTest, CountingSeesAllocations) {
  // The counter itself works (otherwise the zeros below would prove nothing).
  EXPECT_GT(CountAllocations([] {
              std::vector<double> v(100);
              v[0] = 1;
            }),
            0);
  EXPECT_GT(CountAllocations([] {
              Eigen::MatrixXd m(20, 20);
              m.setZero();
            }),
            0);
}

TEST(NoAllocationTest, FixedSizeRegressionAndTrackerUpdates) {
  NigRegression<3>::Options o;
  o.discount.half_life = 20.0;
  NigRegression<3> nig(o);
  EXPECT_EQ(RegressionUpdates(nig, 3), 0);
  NigRegression<2>::Options flat;
  flat.flat_prior = true;
  NigRegression<2> nig_flat(flat);
  EXPECT_EQ(RegressionUpdates(nig_flat, 2), 0);
  DynamicLinearModel<4>::Options d;
  d.state_variance = {1e-3, 1e-3, 0.0, 1e-4};
  DynamicLinearModel<4> dlm(d);
  EXPECT_EQ(RegressionUpdates(dlm, 4), 0);
  d.learn_obs_variance = true;
  DynamicLinearModel<4> dlm_learning(d);
  EXPECT_EQ(RegressionUpdates(dlm_learning, 4), 0);
}

TEST(NoAllocationTest, DynamicSizeUsesPreallocatedBuffers) {
  NigRegression<>::Options o;
  o.p = 6;
  o.discount.lambda = 0.99;
  NigRegression<> nig(o);
  EXPECT_EQ(RegressionUpdates(nig, 6), 0);
  DynamicLinearModel<>::Options d;
  d.p = 6;
  d.state_variance.assign(6, 1e-3);
  DynamicLinearModel<> dlm(d);
  EXPECT_EQ(RegressionUpdates(dlm, 6), 0);
}

TEST(NoAllocationTest, ScalarPosteriorUpdates) {
  NormalGamma::Options ngo;
  ngo.discount.lambda = 0.99;
  NormalGamma ng(ngo);
  BetaBinomial bb(BetaBinomial::Options{});
  GammaPoisson gp(GammaPoisson::Options{});
  GammaExponential ge(GammaExponential::Options{});
  const long n = CountAllocations([&] {
    for (int i = 0; i < 200; ++i) {
      Sample s;
      s.y = 1 + i % 4;
      s.trials = 5;
      s.exposure = 1.5;
      Innovation inn;
      ASSERT_TRUE(ng.Update(s, &inn).ok());
      ASSERT_TRUE(bb.Update(s, &inn).ok());
      ASSERT_TRUE(gp.Update(s, &inn).ok());
      ASSERT_TRUE(ge.Update(s, &inn).ok());
    }
  });
  EXPECT_EQ(n, 0);
}

}  // namespace
}  // namespace bayline::est
