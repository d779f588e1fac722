// State capture and restore: continuing after Pack -> Unpack -> Restore is bit-identical to never
// having stopped; truncated or inconsistent states are rejected and change nothing.
#include <gtest/gtest.h>

#include <cmath>
#include <random>
#include <vector>

#include "estimators/ls/linear_ml.h"
#include "estimators/ls/recursive_least_squares.h"
#include "estimators/ls/rls.h"
#include "tests/unit/estimators/ls/test_util.h"

namespace bayline::est {
namespace {

using testing::BitIdentical;
using testing::MakeData;
using testing::Packed;
using testing::SampleAt;

// Irregularly timed samples, so the time-based forgetting, the windup anchor and the robust
// weights are all exercised.
std::vector<double> Times(int n, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::exponential_distribution<double> gap(2.0);
  std::vector<double> t(static_cast<std::size_t>(n));
  double now = 1e9;
  for (auto& v : t) v = (now += gap(rng));
  return t;
}

template <typename Est, typename Make>
void CheckRoundTrip(Make make, int p, std::uint64_t seed) {
  Eigen::VectorXd theta = Eigen::VectorXd::LinSpaced(p, -1.0, 2.0);
  auto d = MakeData(400, theta, 0.5, seed);
  d.y(250) += 30.0;  // one outlier after the split
  // The last regressor stops exciting from row 20 on; with a 3 s half-life (lambda ~ 0.89 per
  // step) the windup anchor starts firing about 140 steps later, on both sides of the split.
  d.x.col(p - 1).tail(380).setZero();
  const auto times = Times(400, seed + 1);
  Est straight = make(), first = make();
  std::vector<double> buf;
  auto feed = [&](Est& e, int i) {
    Sample s = SampleAt(d, i, &buf, 1.0 + 0.5 * (i % 3));
    s.time = times[static_cast<std::size_t>(i)];
    ASSERT_TRUE(e.Update(s).ok());
  };
  for (int i = 0; i < 200; ++i) {
    feed(straight, i);
    feed(first, i);
  }
  // Capture, serialise to doubles, read back into a fresh object.
  const std::vector<double> packed = Packed(first.state());
  typename Est::State read;
  StateReader reader(packed);
  ASSERT_TRUE(read.Unpack(reader).ok());
  ASSERT_TRUE(reader.status().ok());
  Est resumed = make();
  ASSERT_TRUE(resumed.Restore(read).ok());
  for (int i = 200; i < 400; ++i) {
    feed(straight, i);
    feed(resumed, i);
  }
  EXPECT_TRUE(BitIdentical(Packed(straight.state()), Packed(resumed.state())));
  // The anchor held the unexcited direction: pure decay would leave R_jj ~ 1e-9 and a variance
  // ~ 1e17 for the last coefficient.
  EXPECT_LT(straight.covariance()(p - 1, p - 1), 1e9);
}

RlsOptions TestOptions(bool extended) {
  RlsOptions o;
  o.forgetting.half_life = 3.0;
  o.robust = true;
  o.extended_precision = extended;
  return o;
}

TEST(RlsStateTest, RestoreThenContinueIsBitIdenticalFixed) {
  CheckRoundTrip<RecursiveLeastSquares<3>>(
      [] { return RecursiveLeastSquares<3>(TestOptions(false)); }, 3, 31);
}
TEST(RlsStateTest, RestoreThenContinueIsBitIdenticalDynamic) {
  CheckRoundTrip<RecursiveLeastSquares<Eigen::Dynamic>>(
      [] { return RecursiveLeastSquares<Eigen::Dynamic>(TestOptions(false), 7); }, 7, 32);
}
TEST(RlsStateTest, RestoreThenContinueIsBitIdenticalExtended) {
  CheckRoundTrip<RecursiveLeastSquares<2>>(
      [] { return RecursiveLeastSquares<2>(TestOptions(true)); }, 2, 33);
}
TEST(RlsStateTest, RestoreThenContinueIsBitIdenticalRuntimeP) {
  CheckRoundTrip<Rls>([] { return Rls(TestOptions(false), 4); }, 4, 34);
  CheckRoundTrip<Rls>([] { return Rls(TestOptions(true), 6); }, 6, 35);
}
TEST(RlsStateTest, RestoreThenContinueIsBitIdenticalLinearMl) {
  CheckRoundTrip<LinearMl>([] { return LinearMl(TestOptions(false), 3); }, 3, 36);
}

class RlsStateRejectTest : public ::testing::Test {
 protected:
  void SetUp() override {
    Eigen::VectorXd theta(3);
    theta << 1.0, 2.0, 3.0;
    const auto d = MakeData(50, theta, 0.5, 37);
    std::vector<double> buf;
    for (int i = 0; i < 50; ++i) ASSERT_TRUE(est_.Update(SampleAt(d, i, &buf)).ok());
    good_ = est_.state();
    before_ = Packed(est_.state());
  }
  void ExpectRejected(const RecursiveLeastSquares<3>::State& s, const char* what) {
    const Status st = est_.Restore(s);
    EXPECT_EQ(st.code(), ErrorCode::kInvalidState) << what;
    EXPECT_TRUE(BitIdentical(Packed(est_.state()), before_)) << what;
  }
  RecursiveLeastSquares<3> est_;
  RecursiveLeastSquares<3>::State good_;
  std::vector<double> before_;
};

TEST_F(RlsStateRejectTest, TruncatedOrOverlongStateIsRejected) {
  const std::vector<double> packed = Packed(good_);
  for (std::size_t cut : {std::size_t{0}, std::size_t{1}, std::size_t{5}, packed.size() - 1}) {
    std::vector<double> shorter(packed.begin(), packed.begin() + static_cast<long>(cut));
    RecursiveLeastSquares<3>::State s = good_;
    StateReader r(shorter);
    EXPECT_EQ(s.Unpack(r).code(), ErrorCode::kInvalidState) << cut;
    EXPECT_TRUE(BitIdentical(Packed(s), packed)) << "Unpack failure must leave the target alone";
  }
  std::vector<double> longer = packed;
  longer.push_back(0.0);
  RecursiveLeastSquares<3>::State s;
  StateReader r(longer);
  ASSERT_TRUE(s.Unpack(r).ok());
  EXPECT_EQ(r.status().code(), ErrorCode::kInvalidState);  // the owner of the buffer sees the tail
  // A state for another p does not fit this estimator.
  RecursiveLeastSquares<2> other;
  std::vector<double> two = Packed(other.state());
  RecursiveLeastSquares<3>::State s3;
  StateReader r2(two);
  EXPECT_EQ(s3.Unpack(r2).code(), ErrorCode::kInvalidState);
}

TEST_F(RlsStateRejectTest, InconsistentStatesAreRejected) {
  auto s = good_;
  s.r(0, 0) = -1.0;
  ExpectRejected(s, "negative diagonal");
  s = good_;
  s.r(2, 0) = 0.5;
  ExpectRejected(s, "not triangular");
  s = good_;
  s.z(1) = std::nan("");
  ExpectRejected(s, "nan in z");
  s = good_;
  s.rss = -1.0;
  ExpectRejected(s, "negative rss");
  s = good_;
  s.n_eff = -3.0;
  ExpectRejected(s, "negative n_eff");
  s = good_;
  s.n_obs = 2.5;
  ExpectRejected(s, "fractional count");
  s = good_;
  s.anchor = 3.0;
  ExpectRejected(s, "anchor out of range");
  s = good_;
  s.identified = false;
  ExpectRejected(s, "flag disagrees with a full-rank R");
  s = good_;
  s.r(1, 1) = 0.0;
  ExpectRejected(s, "identified with a singular R");
  s = good_;
  s.extended = true;
  ExpectRejected(s, "extended flag disagrees with options");
  s = good_;
  s.previous_time = INFINITY;
  ExpectRejected(s, "infinite time");
  // And the good one is accepted.
  EXPECT_TRUE(est_.Restore(good_).ok());
}

TEST(RlsStateTest, RuntimePRejectsStateOfAnotherSize) {
  Rls a(RlsOptions{}, 3), b(RlsOptions{}, 5);
  const auto before = Packed(a.state());
  EXPECT_EQ(a.Restore(b.state()).code(), ErrorCode::kInvalidState);
  EXPECT_TRUE(BitIdentical(Packed(a.state()), before));
}

}  // namespace
}  // namespace bayline::est
