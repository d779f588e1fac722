// ARLs of the tabular CUSUM and the EWMA chart against published tables, both from the Markov
// chain / integral equation (arl.h) and from simulated run lengths of the charts themselves.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>

#include "estimators/detect/arl.h"

namespace bayline::est {
namespace {

::testing::AssertionResult Within(double value, double expected, double rel) {
  std::printf("  %.6g vs %.6g (%.2f%%)\n", value, expected, 100.0 * (value / expected - 1.0));
  if (std::fabs(value / expected - 1.0) <= rel) return ::testing::AssertionSuccess();
  return ::testing::AssertionFailure()
         << value << " is not within " << rel * 100 << "% of " << expected;
}

CusumOptions Tabular(double h) {
  CusumOptions o;
  o.k = 0.5;
  o.h = h;
  return o;
}

TEST(ChartsArlReferenceTest, TwoSidedCusumMatchesMontgomerysTable) {
  // Montgomery, Introduction to Statistical Quality Control, table of ARL performance of the
  // tabular CUSUM with k = 1/2 (as listed in /work/shared/REFERENCES.md); R spc's
  // xcusum.arl(k = 0.5, h, mu, sided = "two") reproduces them.
  const double shifts[] = {0.0, 0.5, 1.0, 2.0, 3.0};
  const double h4[] = {168, 26.6, 8.38, 3.34, 2.19};
  const double h5[] = {465, 38.0, 10.4, 4.01, 2.57};
  for (int i = 0; i < 5; ++i) {
    EXPECT_TRUE(Within(CusumArl(Tabular(4), shifts[i]), h4[i], 0.02)) << "h=4 shift " << shifts[i];
    EXPECT_TRUE(Within(CusumArl(Tabular(5), shifts[i]), h5[i], 0.02)) << "h=5 shift " << shifts[i];
  }
}

TEST(ChartsArlReferenceTest, FastInitialResponseMatchesLucasAndCrosier) {
  // Lucas & Crosier (1982), Technometrics 24, Table 1, two-sided k = 0.5, h = 4 with head start
  // h/2 (values as quoted in R spc's xcusum.arl documentation): 149 at 0, 20.1 at 0.5, 5.29 at 1.
  CusumOptions o = Tabular(4);
  o.head_start = 2.0;
  EXPECT_TRUE(Within(CusumArl(o, 0.0), 149, 0.02));
  EXPECT_TRUE(Within(CusumArl(o, 0.5), 20.1, 0.02));
  EXPECT_TRUE(Within(CusumArl(o, 1.0), 5.29, 0.02));
}

TEST(ChartsArlReferenceTest, EwmaMatchesLucasAndSaccucci) {
  // Lucas & Saccucci (1990), Technometrics 32: lambda = 0.1, L = 2.814 gives an in-control ARL of
  // about 500 (R spc xewma.arl gives 499.6); their Table 3 (as quoted in R spc's xewma.arl
  // documentation): lambda = 0.5, L = 3.071: 500 at 0, 17.5 at 1; lambda = 0.03, L = 2.437: 500 at
  // 0, 12.6 at 1. Fixed (asymptotic) limits, as in the paper.
  struct Case {
    double lambda, L, shift, arl;
  } cases[] = {{0.1, 2.814, 0.0, 500},
               {0.5, 3.071, 0.0, 500},
               {0.5, 3.071, 1.0, 17.5},
               {0.03, 2.437, 0.0, 500},
               {0.03, 2.437, 1.0, 12.6}};
  for (const Case& c : cases) {
    EwmaOptions o;
    o.lambda = c.lambda;
    o.L = c.L;
    o.limits = EwmaLimits::kAsymptotic;
    EXPECT_TRUE(Within(EwmaArl(o, c.shift), c.arl, 0.03)) << c.lambda << " " << c.shift;
  }
}

SimulationBudget Runs(int runs, std::uint64_t seed) {
  SimulationBudget b;
  b.runs = runs;
  b.seed = seed;
  return b;
}

TEST(ChartsArlReferenceTest, SimulatedCusumRunLengthsMatchMontgomerysTable) {
  // Montgomery's table (as above); mean of 20,000 simulated run lengths of the Cusum class.
  EXPECT_TRUE(Within(SimulateCusumArl(Tabular(4), 0.0, Runs(20000, 1)), 168, 0.03));
  EXPECT_TRUE(Within(SimulateCusumArl(Tabular(4), 1.0, Runs(20000, 2)), 8.38, 0.03));
  EXPECT_TRUE(Within(SimulateCusumArl(Tabular(5), 0.0, Runs(20000, 3)), 465, 0.03));
  EXPECT_TRUE(Within(SimulateCusumArl(Tabular(5), 1.0, Runs(20000, 4)), 10.4, 0.03));
}

TEST(ChartsArlReferenceTest, SimulatedEwmaRunLengthsMatchLucasAndSaccucci) {
  // Lucas & Saccucci (1990): lambda = 0.1, L = 2.814, fixed limits: ARL0 about 500 (spc 499.6).
  EwmaOptions o;
  o.lambda = 0.1;
  o.L = 2.814;
  o.limits = EwmaLimits::kAsymptotic;
  EXPECT_TRUE(Within(SimulateEwmaArl(o, 0.0, Runs(20000, 5)), 500, 0.03));
  // Exact (time-varying) limits: R spc xewma.arl(0.1, 2.814, 0, sided = "two", limits = "vacl")
  // gives 486.4 (run here on Debian's r-cran-spc); both our integral and the simulation agree.
  o.limits = EwmaLimits::kExact;
  EXPECT_TRUE(Within(EwmaArl(o, 0.0), 486.4, 0.01));
  EXPECT_TRUE(Within(SimulateEwmaArl(o, 0.0, Runs(20000, 6)), 486.4, 0.03));
}

TEST(ChartsArlReferenceTest, SimulationAgreesWithTheChainAcrossDesigns) {
  // Our own chain and integral against our own charts' simulated run lengths (no outside source):
  // one-sided, head-start and out-of-control designs not covered by the tables above.
  CusumOptions c = Tabular(3.5);
  c.k = 0.75;
  c.direction = Direction::kDown;
  c.head_start = 1.0;
  EXPECT_TRUE(Within(SimulateCusumArl(c, -0.5, Runs(20000, 7)), CusumArl(c, -0.5), 0.03));
  EwmaOptions e;
  e.lambda = 0.25;
  e.L = 2.9;
  e.direction = Direction::kUp;
  EXPECT_TRUE(Within(SimulateEwmaArl(e, 0.0, Runs(20000, 8)), EwmaArl(e, 0.0), 0.03));
  EXPECT_TRUE(Within(SimulateEwmaArl(e, 1.0, Runs(20000, 9)), EwmaArl(e, 1.0), 0.03));
}

}  // namespace
}  // namespace bayline::est
