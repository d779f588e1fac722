// The self-started regression chart end to end with the project's own recursive least squares
// (estimators/ls Rls, no forgetting): its recursive residuals, standardized by
// RecursiveResidualStandardizer, feed a CUSUM calibrated to ARL0 = 500 (1 sd design shift). Hawkins
// (1987) / Brown, Durbin & Evans (1975): the standardized recursive residuals are i.i.d. N(0, 1),
// so the in-control ARL counted from the very first observation must be within 10% of 500.
#include <gtest/gtest.h>

#include <array>
#include <cmath>
#include <cstdio>
#include <random>

#include "estimators/detect/calibration.h"
#include "estimators/detect/cusum.h"
#include "estimators/detect/self_starting.h"
#include "estimators/ls/rls.h"

namespace bayline::est {
namespace {

TEST(ChartsSelfStartingRlsReferenceTest, RlsRecursiveResidualsKeepArl0) {
  CusumOptions o;
  ASSERT_TRUE(CalibrateCusum({500, 1.0}, &o).ok());
  std::mt19937_64 rng(91);
  std::uniform_real_distribution<double> u(-5.0, 15.0);
  std::normal_distribution<double> normal(0.0, 1.0);
  const int runs = 3000;  // relative standard error about 1.8%
  double total = 0;
  for (int r = 0; r < runs; ++r) {
    Rls rls(RlsOptions{}, 3);
    RecursiveResidualStandardizer s;
    Cusum chart(o);
    double n = 0;
    for (;;) {
      n += 1;
      const std::array<double, 3> x = {1.0, u(rng), normal(rng)};
      Sample sample;
      sample.x = x;
      sample.y = -1.0 + 0.7 * x[1] + 4.0 * x[2] + 2.5 * normal(rng);
      RecursiveResidual rr;
      ASSERT_TRUE(rls.Update(sample, nullptr, &rr).ok());
      double z = 0;
      ASSERT_TRUE(s.Update(rr.valid ? rr.value : NAN, &z).ok());
      if (std::isnan(z)) continue;
      if (chart.Update(z, ObservationMark{}).raised) break;
    }
    total += n;
  }
  std::printf("self-started RLS regression CUSUM: simulated ARL0 %.1f (target 500)\n",
              total / runs);
  EXPECT_NEAR(total / runs, 500, 50);
}

}  // namespace
}  // namespace bayline::est
