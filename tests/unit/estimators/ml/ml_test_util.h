// Helpers shared by the ml unit tests: relative tolerances, packing, and round-trip checks.
#pragma once

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <vector>

#include "estimators/core/report.h"
#include "estimators/core/sample.h"
#include "estimators/core/state_codec.h"

namespace bayline::est::testing {

// |a - b| <= tol * max(|a|, |b|, tiny).
inline ::testing::AssertionResult RelNear(double a, double b, double tol) {
  const double scale = std::max({std::fabs(a), std::fabs(b), 1e-300});
  if (std::fabs(a - b) <= tol * scale) return ::testing::AssertionSuccess();
  return ::testing::AssertionFailure()
         << a << " vs " << b << " relative difference " << std::fabs(a - b) / scale << " > " << tol;
}

inline Sample Y(double y, double weight = 1.0) {
  Sample s;
  s.y = y;
  s.weight = weight;
  return s;
}

template <typename State>
std::vector<double> Packed(const State& st) {
  std::vector<double> v;
  StateWriter w(&v);
  st.Pack(w);
  return v;
}

// Equal bit for bit (NaN == NaN).
inline bool SameBits(double a, double b) { return (std::isnan(a) && std::isnan(b)) || a == b; }
inline bool SameBits(const std::vector<double>& a, const std::vector<double>& b) {
  return a.size() == b.size() && std::equal(a.begin(), a.end(), b.begin(),
                                            [](double u, double v) { return SameBits(u, v); });
}
inline void ExpectSameReport(const ParameterReport& a, const ParameterReport& b) {
  ASSERT_EQ(a.value.size(), b.value.size());
  EXPECT_EQ(a.identifiable, b.identifiable);
  for (std::size_t i = 0; i < a.value.size(); ++i) {
    EXPECT_TRUE(SameBits(a.value[i], b.value[i])) << i;
    EXPECT_TRUE(SameBits(a.std_error[i], b.std_error[i])) << i;
  }
  EXPECT_TRUE(SameBits(a.log_likelihood, b.log_likelihood));
  EXPECT_TRUE(SameBits(a.effective_n, b.effective_n));
}
inline void ExpectSameInnovation(const Innovation& a, const Innovation& b) {
  EXPECT_EQ(a.valid, b.valid);
  EXPECT_TRUE(SameBits(a.prediction, b.prediction));
  EXPECT_TRUE(SameBits(a.predictive_sd, b.predictive_sd));
  EXPECT_TRUE(SameBits(a.standardized, b.standardized));
  EXPECT_TRUE(SameBits(a.log_predictive, b.log_predictive));
}

// Feeds `first` samples to `a`, packs its state, unpacks it into a fresh estimator `b` built by
// `make`, then feeds `rest` to both and requires identical packed states, reports and innovations.
template <typename Make, typename Samples>
void ExpectRoundTripBitIdentical(Make make, const Samples& first, const Samples& rest) {
  auto a = make();
  for (const auto& s : first) ASSERT_TRUE(a.Update(s).ok());
  const std::vector<double> packed = Packed(a.state());
  auto b = make();
  auto st = b.state();
  StateReader reader(packed);
  ASSERT_TRUE(st.Unpack(reader).ok());
  ASSERT_TRUE(b.Restore(st).ok());
  EXPECT_TRUE(SameBits(Packed(b.state()), packed));
  for (const auto& s : rest) {
    Innovation ia, ib;
    ASSERT_TRUE(a.Update(s, &ia).ok());
    ASSERT_TRUE(b.Update(s, &ib).ok());
    ExpectSameInnovation(ia, ib);
  }
  EXPECT_TRUE(SameBits(Packed(a.state()), Packed(b.state())));
  ExpectSameReport(a.Report(), b.Report());
}

// A truncated or extended packed state is rejected with kInvalidState and Restore is not reached.
template <typename Est>
void ExpectTruncatedAndExtendedRejected(const Est& est) {
  const std::vector<double> packed = Packed(est.state());
  for (std::size_t n = 0; n < packed.size(); ++n) {
    std::vector<double> cut(packed.begin(), packed.begin() + static_cast<std::ptrdiff_t>(n));
    auto st = est.state();
    StateReader reader(cut);
    const Status s = st.Unpack(reader);
    EXPECT_FALSE(s.ok()) << "accepted a state cut to " << n << " of " << packed.size();
    EXPECT_EQ(s.code(), ErrorCode::kInvalidState);
  }
  std::vector<double> longer = packed;
  longer.push_back(0.0);
  auto st = est.state();
  StateReader reader(longer);
  EXPECT_EQ(st.Unpack(reader).code(), ErrorCode::kInvalidState);
}

// `bad` is rejected with `code`, and the estimator's packed state is unchanged.
template <typename Est>
void ExpectRejected(Est& est, const Sample& bad, ErrorCode code) {
  const std::vector<double> before = Packed(est.state());
  Innovation inn;
  inn.prediction = 12345.0;
  const Status s = est.Update(bad, &inn);
  EXPECT_EQ(s.code(), code) << s.ToString();
  EXPECT_FALSE(s.message().empty());
  EXPECT_TRUE(SameBits(Packed(est.state()), before));
  EXPECT_EQ(inn.prediction, 12345.0) << "innovation written on rejection";
}

}  // namespace bayline::est::testing
