// Unit tests of the shared estimator contracts: Status, Sample checks, forgetting, state codec.
#include <gtest/gtest.h>

#include <Eigen/Core>
#include <cmath>
#include <limits>
#include <vector>

#include "estimators/core/forgetting.h"
#include "estimators/core/sample.h"
#include "estimators/core/state_codec.h"
#include "estimators/core/status.h"

namespace bayline::est {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr double kInf = std::numeric_limits<double>::infinity();

TEST(StatusTest, OkHasNoMessageAndErrorNamesItsCode) {
  EXPECT_TRUE(Status::Ok().ok());
  EXPECT_EQ(Status::Ok().ToString(), "ok");
  const Status s = Status::Error(ErrorCode::kOutOfDomain, "count -1 is negative");
  EXPECT_FALSE(s.ok());
  EXPECT_EQ(s.code(), ErrorCode::kOutOfDomain);
  EXPECT_EQ(s.ToString(), "out_of_domain: count -1 is negative");
}

TEST(StatusTest, EveryCodeHasADistinctStableName) {
  const ErrorCode codes[] = {
      ErrorCode::kOk,           ErrorCode::kNonFinite,       ErrorCode::kWrongRegressorCount,
      ErrorCode::kOutOfDomain,  ErrorCode::kInvalidWeight,   ErrorCode::kInvalidConfig,
      ErrorCode::kInvalidState, ErrorCode::kNumericalFailure};
  std::vector<std::string_view> names;
  for (ErrorCode c : codes) {
    const std::string_view name = ErrorCodeName(c);
    EXPECT_NE(name, "unknown");
    for (std::string_view other : names) EXPECT_NE(name, other);
    names.push_back(name);
  }
}

TEST(SampleCheckTest, AcceptsAWellFormedSample) {
  const double x[] = {1.0, 2.5};
  Sample s;
  s.y = 3.0;
  s.x = x;
  EXPECT_TRUE(CheckCommonFields(s, 2).ok());
}

TEST(SampleCheckTest, RejectsEachBadFieldWithItsCode) {
  const double x[] = {1.0, 2.5};
  const double bad_x[] = {1.0, kNaN};
  auto make = [&] {
    Sample s;
    s.y = 1.0;
    s.x = x;
    return s;
  };
  Sample s = make();
  s.y = kNaN;
  EXPECT_EQ(CheckCommonFields(s, 2).code(), ErrorCode::kNonFinite);
  s = make();
  s.y = kInf;
  EXPECT_EQ(CheckCommonFields(s, 2).code(), ErrorCode::kNonFinite);
  s = make();
  EXPECT_EQ(CheckCommonFields(s, 3).code(), ErrorCode::kWrongRegressorCount);
  s = make();
  s.x = bad_x;
  const Status bad = CheckCommonFields(s, 2);
  EXPECT_EQ(bad.code(), ErrorCode::kNonFinite);
  EXPECT_NE(bad.message().find("regressor 1"), std::string::npos) << bad.message();
  s = make();
  s.weight = 0.0;
  EXPECT_EQ(CheckCommonFields(s, 2).code(), ErrorCode::kInvalidWeight);
  s = make();
  s.weight = kNaN;
  EXPECT_EQ(CheckCommonFields(s, 2).code(), ErrorCode::kNonFinite);
  s = make();
  s.trials = kInf;
  EXPECT_EQ(CheckCommonFields(s, 2).code(), ErrorCode::kNonFinite);
  s = make();
  s.exposure = kNaN;
  EXPECT_EQ(CheckCommonFields(s, 2).code(), ErrorCode::kNonFinite);
  s = make();
  s.time = kInf;
  EXPECT_EQ(CheckCommonFields(s, 2).code(), ErrorCode::kNonFinite);
  s = make();
  s.time = kNaN;  // untimed is allowed
  EXPECT_TRUE(CheckCommonFields(s, 2).ok());
}

TEST(SampleCheckTest, FastValidityAndDescribedProblemAgree) {
  // CheckCommonFields answers from the inline CommonFieldsValid and describes a problem only when
  // there is one: both must see the same problems.
  const double x[] = {1.0, 2.5};
  const double bad_x[] = {kInf, 2.5};
  std::vector<Sample> samples;
  for (int field = 0; field < 10; ++field) {
    Sample s;
    s.y = 1.0;
    s.x = x;
    if (field == 1) s.y = -kInf;
    if (field == 2) s.x = bad_x;
    if (field == 3) s.weight = -1.0;
    if (field == 4) s.weight = kInf;
    if (field == 5) s.trials = kNaN;
    if (field == 6) s.exposure = -kInf;
    if (field == 7) s.time = -kInf;
    if (field == 8) s.time = 12.5;
    if (field == 9) s.x = std::span<const double>(x, 1);
    samples.push_back(s);
  }
  for (std::size_t i = 0; i < samples.size(); ++i) {
    const bool valid = CommonFieldsValid(samples[i], 2);
    EXPECT_EQ(valid, i == 0 || i == 8) << "case " << i;
    EXPECT_EQ(DescribeCommonFieldsProblem(samples[i], 2).ok(), valid) << "case " << i;
    EXPECT_EQ(CheckCommonFields(samples[i], 2).ok(), valid) << "case " << i;
  }
}

TEST(ForgettingTest, PerObservationFactorIsLambda) {
  ForgettingOptions o;
  o.lambda = 0.99;
  ASSERT_TRUE(o.Validate().ok());
  EXPECT_TRUE(o.enabled());
  EXPECT_EQ(ForgettingFactor(o, 10.0, 9.0), 0.99);
  EXPECT_EQ(ForgettingFactor(o, kNaN, kNaN), 0.99);
}

TEST(ForgettingTest, HalfLifeHalvesWeightAfterOneHalfLife) {
  ForgettingOptions o;
  o.half_life = 30.0;
  ASSERT_TRUE(o.Validate().ok());
  EXPECT_DOUBLE_EQ(ForgettingFactor(o, 130.0, 100.0), 0.5);
  EXPECT_DOUBLE_EQ(ForgettingFactor(o, 160.0, 100.0), 0.25);
  // Untimed samples, the first sample and a clock that did not advance forget nothing.
  EXPECT_EQ(ForgettingFactor(o, kNaN, 100.0), 1.0);
  EXPECT_EQ(ForgettingFactor(o, 100.0, kNaN), 1.0);
  EXPECT_EQ(ForgettingFactor(o, 90.0, 100.0), 1.0);
}

TEST(ForgettingTest, ValidateRejectsOutOfRangeOptions) {
  ForgettingOptions o;
  o.lambda = 0.0;
  EXPECT_EQ(o.Validate().code(), ErrorCode::kInvalidConfig);
  o.lambda = 1.01;
  EXPECT_EQ(o.Validate().code(), ErrorCode::kInvalidConfig);
  o.lambda = 1.0;
  o.half_life = -1.0;
  EXPECT_EQ(o.Validate().code(), ErrorCode::kInvalidConfig);
  o.half_life = kInf;
  EXPECT_EQ(o.Validate().code(), ErrorCode::kInvalidConfig);
  o.half_life = 0.0;
  EXPECT_TRUE(o.Validate().ok());
  EXPECT_FALSE(o.enabled());
}

TEST(StateCodecTest, RoundTripsScalarsBoolsAndMatricesBitExactly) {
  Eigen::Matrix2d m;
  m << 1.0 / 3.0, -2e-300, kInf, 7.0;
  std::vector<double> packed;
  StateWriter w(&packed);
  w.Put(0.1);
  w.Put(true);
  w.Put(m);
  ASSERT_EQ(packed.size(), 6u);

  StateReader r(packed);
  double a = 0;
  bool b = false;
  Eigen::Matrix2d back;
  EXPECT_TRUE(r.Get(a));
  EXPECT_TRUE(r.Get(b));
  EXPECT_TRUE(r.Get(back));
  EXPECT_TRUE(r.status().ok());
  EXPECT_EQ(a, 0.1);
  EXPECT_TRUE(b);
  EXPECT_EQ(back(0, 0), m(0, 0));
  EXPECT_EQ(back(0, 1), m(0, 1));
  EXPECT_EQ(back(1, 0), m(1, 0));
  EXPECT_EQ(back(1, 1), m(1, 1));
}

TEST(StateCodecTest, ShortInputFailsAndTrailingInputIsReported) {
  const std::vector<double> three = {1, 2, 3};
  StateReader r(three);
  Eigen::Matrix2d m;
  EXPECT_FALSE(r.Get(m));
  EXPECT_EQ(r.status().code(), ErrorCode::kInvalidState);

  StateReader r2(three);
  double v = 0;
  EXPECT_TRUE(r2.Get(v));
  EXPECT_EQ(r2.status().code(), ErrorCode::kInvalidState);  // two values left over
  EXPECT_TRUE(r2.status(/*require_end=*/false).ok());
}

}  // namespace
}  // namespace bayline::est
