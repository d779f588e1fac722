// Self-started charts keep the false-alarm rate they were calibrated for while the in-control
// parameters are still unknown (Hawkins 1987, The Statistician 36: the standardized values are
// i.i.d. N(0, 1) from the 3rd observation on), counting run lengths from the very first
// observation. Target: a two-sided CUSUM calibrated to ARL0 = 500 for a 1 sd shift; simulated
// in-control ARL within 10% of 500.
#include <gtest/gtest.h>

#include <Eigen/Dense>
#include <cmath>
#include <cstdio>
#include <random>

#include "estimators/detect/calibration.h"
#include "estimators/detect/cusum.h"
#include "estimators/detect/self_starting.h"

namespace bayline::est {
namespace {

constexpr double kTarget = 500.0;
constexpr int kRuns = 3000;  // relative standard error of the mean run length about 1.8%

CusumOptions Calibrated() {
  CusumOptions o;
  EXPECT_TRUE(CalibrateCusum({kTarget, 1.0}, &o).ok());
  return o;
}

TEST(ChartsSelfStartingReferenceTest, GaussianWithUnknownMeanAndSdKeepsArl0) {
  const CusumOptions o = Calibrated();
  std::mt19937_64 rng(77);
  std::normal_distribution<double> y(37.0, 4.2);  // parameters the chart is never told
  double total = 0;
  for (int r = 0; r < kRuns; ++r) {
    SelfStartingStandardizer s;
    Cusum chart(o);
    double n = 0;
    for (;;) {
      n += 1;
      double z = 0;
      ASSERT_TRUE(s.Update(y(rng), &z).ok());
      if (std::isnan(z)) continue;  // observations 1 and 2
      if (chart.Update(z, ObservationMark{}).raised) break;
    }
    total += n;
  }
  const double arl = total / kRuns;
  std::printf("self-started gaussian CUSUM: simulated ARL0 %.1f (target 500)\n", arl);
  EXPECT_NEAR(arl, kTarget, 0.10 * kTarget) << "self-started gaussian ARL0 " << arl;
}

TEST(ChartsSelfStartingReferenceTest, RegressionRecursiveResidualsKeepArl0) {
  // y = 3 + 2 x1 - x2 + e, e ~ N(0, 0.5^2), coefficients and noise unknown to the chart. The
  // recursive residuals are computed here by textbook covariance-form recursive least squares
  // (Brown, Durbin & Evans 1975): w_n = (y_n - x_n' b_{n-1}) / sqrt(1 + x_n' P_{n-1} x_n).
  const CusumOptions o = Calibrated();
  std::mt19937_64 rng(78);
  std::uniform_real_distribution<double> u(0.0, 10.0);
  std::normal_distribution<double> normal(0.0, 1.0);
  double total = 0;
  double max_diff = 0;
  for (int r = 0; r < kRuns; ++r) {
    RecursiveResidualStandardizer s;
    Cusum chart(o);
    Eigen::Matrix3d xx = Eigen::Matrix3d::Zero(), p = Eigen::Matrix3d::Zero();
    Eigen::Vector3d xy = Eigen::Vector3d::Zero(), b = Eigen::Vector3d::Zero();
    double rss = 0, nu = 0;
    double n = 0;
    for (;;) {
      n += 1;
      const Eigen::Vector3d x(1.0, u(rng), normal(rng));
      const double yv = 3.0 + 2.0 * x[1] - x[2] + 0.5 * normal(rng);
      double w = NAN;
      if (n <= 3) {  // not identified yet: accumulate, then solve exactly at n = 3
        xx += x * x.transpose();
        xy += x * yv;
        if (n == 3) {
          p = xx.inverse();
          b = p * xy;
        }
      } else {
        const Eigen::Vector3d px = p * x;
        const double f = 1.0 + x.dot(px);
        const double e = yv - x.dot(b);
        w = e / std::sqrt(f);
        b += px * (e / f);
        p -= px * px.transpose() / f;
      }
      double z = 0;
      ASSERT_TRUE(s.Update(w, &z).ok());
      if (!std::isnan(w)) {
        // The stateless helper with the residual scale of the earlier observations gives the same
        // z.
        if (nu >= 1)
          max_diff = std::max(
              max_diff, std::fabs(z - StandardizeRecursiveResidual(w, std::sqrt(rss / nu), nu)));
        rss += w * w;
        nu += 1;
      }
      if (std::isnan(z)) continue;
      if (chart.Update(z, ObservationMark{}).raised) break;
    }
    total += n;
  }
  EXPECT_LT(max_diff, 1e-12);
  const double arl = total / kRuns;
  std::printf("self-started regression CUSUM: simulated ARL0 %.1f (target 500)\n", arl);
  EXPECT_NEAR(arl, kTarget, 0.10 * kTarget) << "self-started regression ARL0 " << arl;
}

TEST(ChartsSelfStartingReferenceTest, PlugInEstimatesFromAShortStartDoNotKeepArl0) {
  // Contrast (why self-starting matters; common practice, no source): standardizing with the mean
  // and sd of the first 10 observations, held fixed, gives an ARL0 far from the target.
  const CusumOptions o = Calibrated();
  std::mt19937_64 rng(79);
  std::normal_distribution<double> y(37.0, 4.2);
  double total = 0;
  const int runs = 1000;
  for (int r = 0; r < runs; ++r) {
    double sum = 0, sum2 = 0;
    for (int i = 0; i < 10; ++i) {
      const double v = y(rng);
      sum += v;
      sum2 += v * v;
    }
    const double mean = sum / 10, sd = std::sqrt((sum2 - 10 * mean * mean) / 9);
    Cusum chart(o);
    double n = 10;
    for (;;) {
      n += 1;
      if (chart.Update((y(rng) - mean) / sd, ObservationMark{}).raised || n > 1e6) break;
    }
    total += n;
  }
  std::printf("plug-in (first 10 observations) CUSUM: simulated ARL0 %.1f (target 500)\n",
              total / runs);
  EXPECT_GT(std::fabs(total / runs / kTarget - 1.0), 0.10);
}

}  // namespace
}  // namespace bayline::est
