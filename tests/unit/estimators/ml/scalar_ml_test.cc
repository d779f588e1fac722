// The contract every ScalarMl family shares (scalar_ml.h): a state an Update accepts passes the
// same validation as Restore, so it restores; an Update whose result would not is rejected as a
// numerical failure and changes nothing.
#include "estimators/ml/scalar_ml.h"

#include <gtest/gtest.h>

#include <cmath>
#include <random>
#include <vector>

#include "estimators/ml/binomial_ml.h"
#include "estimators/ml/exponential_ml.h"
#include "estimators/ml/gamma_ml.h"
#include "estimators/ml/gaussian_ml.h"
#include "estimators/ml/lognormal_ml.h"
#include "estimators/ml/poisson_ml.h"
#include "tests/unit/estimators/ml/ml_test_util.h"

namespace bayline::est {
namespace {

using testing::Packed;
using testing::SameBits;

// Hostile but finite input: magnitudes from 1e-300 to 1e300 in y and in the weights, whole
// counts up to 1e18, a forgetting factor, and each sample is either accepted (and must then leave
// a restorable state) or rejected (and must then change nothing).
template <typename Est>
void ExpectAcceptedStatesRestore(std::uint64_t seed, bool counts, bool positive) {
  MlOptions options;
  options.forgetting.lambda = 0.9;
  Est est(options);
  std::mt19937_64 rng(seed);
  const double magnitudes[] = {1.0, 3.0, 1e-300, 1e-160, 1e-20, 1e20, 1e154, 1e200, 1e300};
  const double weights[] = {1.0, 0.5, 1e-300, 1e-160, 1e-20, 1e20, 1e154, 1e300};
  std::uniform_int_distribution<std::size_t> pick_m(0, std::size(magnitudes) - 1);
  std::uniform_int_distribution<std::size_t> pick_w(0, std::size(weights) - 1);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  int accepted = 0;
  for (int i = 0; i < 3000; ++i) {
    Sample s;
    const double m = magnitudes[pick_m(rng)] * (1.0 + unit(rng));
    s.y = counts ? std::floor(std::fmin(m, 1e18)) : (positive || unit(rng) < 0.5 ? m : -m);
    s.trials = counts ? s.y + std::floor(10 * unit(rng)) + 1 : 1.0;
    s.exposure = counts ? weights[pick_w(rng)] : 1.0;
    s.weight = unit(rng) < 0.5 ? 1.0 : weights[pick_w(rng)];
    const std::vector<double> before = Packed(est.state());
    const Status st = est.Update(s);
    if (!st.ok()) {
      EXPECT_TRUE(SameBits(Packed(est.state()), before)) << "rejection changed the state";
      continue;
    }
    ++accepted;
    const Status v = est.state().Validate();
    ASSERT_TRUE(v.ok()) << "accepted y = " << s.y << " weight = " << s.weight << " into a state "
                        << "that does not validate: " << v.ToString();
    ASSERT_TRUE(Est(options).Restore(est.state()).ok());
  }
  EXPECT_GT(accepted, 100);
}

TEST(ScalarMlTest, EveryAcceptedStateRestores) {
  for (std::uint64_t seed : {1u, 2u, 3u}) {
    ExpectAcceptedStatesRestore<GaussianMl>(seed, false, false);
    ExpectAcceptedStatesRestore<LognormalMl>(seed, false, true);
    ExpectAcceptedStatesRestore<ExponentialMl>(seed, false, true);
    ExpectAcceptedStatesRestore<GammaMl>(seed, false, true);
    ExpectAcceptedStatesRestore<PoissonMl>(seed, true, true);
    ExpectAcceptedStatesRestore<BinomialMl>(seed, true, true);
  }
}

// y = 1e200 then -1e200: the squared deviation overflows, the candidate M2 is not finite, and the
// update is refused as a numerical failure by the state validation.
TEST(ScalarMlTest, UpdateThatWouldBreakTheInvariantsIsANumericalFailure) {
  GaussianMl g;
  ASSERT_TRUE(g.Update(testing::Y(1e200)).ok());
  testing::ExpectRejected(g, testing::Y(-1e200), ErrorCode::kNumericalFailure);
  EXPECT_TRUE(g.Update(testing::Y(1e200)).ok());  // the kept state goes on updating
  EXPECT_EQ(g.state().count, 2.0);
}

}  // namespace
}  // namespace bayline::est
