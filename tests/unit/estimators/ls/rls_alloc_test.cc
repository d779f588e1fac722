// The update path never allocates: this binary replaces the global operator new with a counting
// one and runs updates (fixed, dynamic, extended, robust, forgetting, with all outputs) between two
// readings of the counter.
#include <gtest/gtest.h>

#include <atomic>
#include <cstdlib>
#include <new>
#include <vector>

#include "estimators/ls/linear_ml.h"
#include "estimators/ls/rls.h"
#include "tests/unit/estimators/ls/test_util.h"

namespace {
std::atomic<long> g_allocations{0};
}  // namespace

void* operator new(std::size_t n) {
  g_allocations.fetch_add(1, std::memory_order_relaxed);
  if (void* p = std::malloc(n ? n : 1)) return p;
  throw std::bad_alloc();
}
void* operator new[](std::size_t n) { return operator new(n); }
void operator delete(void* p) noexcept { std::free(p); }
void operator delete[](void* p) noexcept { std::free(p); }
void operator delete(void* p, std::size_t) noexcept { std::free(p); }
void operator delete[](void* p, std::size_t) noexcept { std::free(p); }

namespace bayline::est {
namespace {

template <typename Est>
long AllocationsDuringUpdates(Est& est, int p, bool with_time) {
  Eigen::VectorXd theta = Eigen::VectorXd::LinSpaced(p, 1.0, 2.0);
  const auto d = testing::MakeData(300, theta, 0.3, 41);
  std::vector<std::vector<double>> rows(300);
  for (int i = 0; i < 300; ++i) {
    rows[static_cast<std::size_t>(i)].assign(d.x.row(i).data(), d.x.row(i).data());
    for (int j = 0; j < p; ++j) {
      // The last regressor stops after row 150 so the windup anchor runs too (p > 1).
      const bool stopped = p > 1 && j == p - 1 && i >= 150;
      rows[static_cast<std::size_t>(i)].push_back(stopped ? 0.0 : d.x(i, j));
    }
  }
  std::vector<double> lo(static_cast<std::size_t>(p), 0.0);
  Innovation inn;
  RecursiveResidual rr;
  const long before = g_allocations.load();
  for (int i = 0; i < 300; ++i) {
    Sample s;
    s.y = d.y(i) + (i == 150 ? 50.0 : 0.0);
    s.x = rows[static_cast<std::size_t>(i)];
    if (with_time) s.time = 0.5 * i;
    const Status st = est.Update(s, &inn, &rr);
    if (!st.ok()) return -1;
  }
  return g_allocations.load() - before;
}

RlsOptions Opt(bool extended, bool robust, double half_life) {
  RlsOptions o;
  o.extended_precision = extended;
  o.robust = robust;
  o.forgetting.half_life = half_life;
  return o;
}

TEST(RlsAllocationTest, CounterSeesAllocations) {  // control: the counter works
  const long before = g_allocations.load();
  std::vector<double>* v = new std::vector<double>(10);
  delete v;
  EXPECT_GE(g_allocations.load() - before, 2);
}

TEST(RlsAllocationTest, UpdatePathDoesNotAllocate) {
  for (int p : {1, 2, 3, 4, 5, 12}) {
    for (bool extended : {false, true}) {
      for (bool robust : {false, true}) {
        Rls est(Opt(extended, robust, 10.0), p);
        EXPECT_EQ(AllocationsDuringUpdates(est, p, true), 0)
            << "p=" << p << " extended=" << extended << " robust=" << robust;
      }
    }
    RecursiveLeastSquares<Eigen::Dynamic> dyn(Opt(false, false, 0.0), p);
    EXPECT_EQ(AllocationsDuringUpdates(dyn, p, false), 0) << "dynamic p=" << p;
  }
  RecursiveLeastSquares<8> fixed8(Opt(true, true, 5.0));
  EXPECT_EQ(AllocationsDuringUpdates(fixed8, 8, true), 0);
}

TEST(RlsAllocationTest, LinearMlUpdateDoesNotAllocate) {
  LinearMl ml(Opt(false, false, 0.0), 3);
  Eigen::VectorXd theta(3);
  theta << 1.0, 2.0, 3.0;
  const auto d = testing::MakeData(100, theta, 0.3, 42);
  std::vector<double> buf(3);
  Innovation inn;
  const long before = g_allocations.load();
  for (int i = 0; i < 100; ++i) {
    for (int j = 0; j < 3; ++j) buf[static_cast<std::size_t>(j)] = d.x(i, j);
    Sample s;
    s.y = d.y(i);
    s.x = buf;
    ASSERT_TRUE(ml.Update(s, &inn).ok());
  }
  EXPECT_EQ(g_allocations.load() - before, 0);
}

}  // namespace
}  // namespace bayline::est
