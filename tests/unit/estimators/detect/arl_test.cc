// Internal consistency of the ARL computations (external references live in tests/reference).
#include "estimators/detect/arl.h"

#include <gtest/gtest.h>

#include <cmath>

#include "estimators/core/distributions.h"

namespace bayline::est {
namespace {

TEST(ChartsArlTest, EwmaWithLambdaOneIsTheShewhartChart) {
  // lambda = 1: Z_i = z_i, so the run length is geometric with p = P(|z| > L):
  // ARL = 1 / p (standard identity; 370.4 at L = 3 is common practice, no source).
  for (double mu : {0.0, 0.5, 1.0, 2.0}) {
    for (EwmaLimits lim : {EwmaLimits::kExact, EwmaLimits::kAsymptotic}) {
      EwmaOptions o;
      o.lambda = 1.0;
      o.L = 3.0;
      o.limits = lim;
      const double p = dist::NormalSf(3.0 - mu) + dist::NormalCdf(-3.0 - mu);
      EXPECT_NEAR(EwmaArl(o, mu), 1.0 / p, 1e-6 / p) << mu;
    }
  }
}

TEST(ChartsArlTest, CusumChainConvergesWithMoreStates) {
  CusumOptions o;
  o.k = 0.25;
  o.h = 8.0;
  const double base = CusumArl(o, 0.0);
  ArlAccuracy fine;
  fine.cusum_states = 400;
  EXPECT_NEAR(CusumArl(o, 0.0, fine), base, 5e-4 * base);
  ArlAccuracy coarse;
  coarse.cusum_states = 40;
  EXPECT_NEAR(CusumArl(o, 0.0, coarse), base, 5e-3 * base);
}

TEST(ChartsArlTest, TwoSidedCusumCombinesItsOneSidedChains) {
  CusumOptions o;
  o.k = 0.5;
  o.h = 4.5;
  for (double mu : {0.0, 0.3, 1.0}) {
    const double up = OneSidedCusumArl(o.k, o.h, mu, 0.0),
                 down = OneSidedCusumArl(o.k, o.h, -mu, 0.0);
    EXPECT_NEAR(CusumArl(o, mu), 1.0 / (1.0 / up + 1.0 / down), 1e-9 * up);
    o.direction = Direction::kUp;
    EXPECT_DOUBLE_EQ(CusumArl(o, mu), up);
    o.direction = Direction::kDown;
    EXPECT_DOUBLE_EQ(CusumArl(o, -mu), up);
    o.direction = Direction::kBoth;
  }
  EXPECT_NEAR(CusumArl(o, 0.0), 0.5 * OneSidedCusumArl(o.k, o.h, 0.0, 0.0),
              1e-9 * CusumArl(o, 0.0));
}

TEST(ChartsArlTest, ArlFallsWithShiftAndHeadStartAndExactLimits) {
  CusumOptions c;
  EwmaOptions e;
  double prev_c = CusumArl(c, 0.0), prev_e = EwmaArl(e, 0.0);
  for (double mu = 0.25; mu <= 3.0; mu += 0.25) {
    const double ac = CusumArl(c, mu), ae = EwmaArl(e, mu);
    EXPECT_LT(ac, prev_c);
    EXPECT_LT(ae, prev_e);
    prev_c = ac, prev_e = ae;
  }
  CusumOptions fir = c;
  fir.head_start = 0.5 * c.h;
  EXPECT_LT(CusumArl(fir, 1.0), CusumArl(c, 1.0));
  EwmaOptions asym = e;
  asym.limits = EwmaLimits::kAsymptotic;
  EXPECT_LT(EwmaArl(e, 0.0), EwmaArl(asym, 0.0));
  EXPECT_LT(EwmaArl(e, 1.0), EwmaArl(asym, 1.0));
}

TEST(ChartsArlTest, OneSidedEwmaIsSymmetric) {
  EwmaOptions up;
  up.direction = Direction::kUp;
  up.L = 2.5;
  EwmaOptions down = up;
  down.direction = Direction::kDown;
  EXPECT_DOUBLE_EQ(EwmaArl(up, 0.7), EwmaArl(down, -0.7));
  // A one-sided chart alarms about half as often as the two-sided one with the same L.
  EwmaOptions both = up;
  both.direction = Direction::kBoth;
  const double ratio = EwmaArl(up, 0.0) / EwmaArl(both, 0.0);
  EXPECT_GT(ratio, 1.8);
  EXPECT_LT(ratio, 2.2);
}

TEST(ChartsArlTest, InvalidInputGivesNaN) {
  CusumOptions c;
  c.h = -1;
  EXPECT_TRUE(std::isnan(CusumArl(c, 0.0)));
  EXPECT_TRUE(std::isnan(CusumArl(CusumOptions{}, NAN)));
  EwmaOptions e;
  e.lambda = 2;
  EXPECT_TRUE(std::isnan(EwmaArl(e, 0.0)));
  EXPECT_TRUE(std::isnan(OneSidedCusumArl(0.5, 4.0, 0.0, 5.0)));
}

TEST(ChartsArlTest, SimulatedArlIsReproducibleForASeed) {
  CusumOptions c;
  c.h = 2.0;
  SimulationBudget b;
  b.runs = 500;
  EXPECT_EQ(SimulateCusumArl(c, 0.5, b), SimulateCusumArl(c, 0.5, b));
  b.seed += 1;
  const double other = SimulateCusumArl(c, 0.5, b);
  b.seed -= 1;
  EXPECT_NE(other, SimulateCusumArl(c, 0.5, b));
}

}  // namespace
}  // namespace bayline::est
