// NIST StRD linear least squares (tests/reference/data/nist-strd; certified values by NIST, public
// domain), streamed one observation at a time. Scores are NIST's LRE, capped at 15 digits.
#include <gtest/gtest.h>

#include <ostream>

#include "tests/reference/ls/nist_lls.h"

namespace bayline::est::nist {
namespace {

struct Expect {
  const char* name;
  double min_lre;  // double mode, coefficients and nonzero certified sds
};

void PrintTo(const Expect& e, std::ostream* os) {
  *os << e.name << " (LRE >= " << e.min_lre << ")";
}

// Thresholds for the default (double) mode; source of the certified values: NIST StRD.
const Expect kDouble[] = {
    {"Norris", 12},   {"NoInt1", 12},  {"NoInt2", 12},    {"Longley", 11}, {"Pontius", 11},
    {"Wampler2", 12}, {"Wampler1", 9}, {"Wampler3", 8.5}, {"Wampler4", 7}, {"Wampler5", 5},
};

class NistDouble : public ::testing::TestWithParam<Expect> {};

TEST_P(NistDouble, LreOfEveryCoefficientAndStdDev) {
  const Dataset d = Load(GetParam().name);
  const Fit f = Stream(d, Mode::kDouble);
  ASSERT_TRUE(f.identifiable);
  const Score s = ScoreFit(d, f);
  EXPECT_GE(s.min_b, GetParam().min_lre);  // NIST StRD certified coefficients
  if (s.has_sd) {
    EXPECT_GE(s.min_sd, GetParam().min_lre);  // NIST StRD certified std devs
  }
  EXPECT_FALSE(f.ill_conditioned);
}

INSTANTIATE_TEST_SUITE_P(Datasets, NistDouble, ::testing::ValuesIn(kDouble),
                         [](const auto& info) { return std::string(info.param.name); });

// Filip in double precision: LRE >= 6 or the estimator says the problem is ill-conditioned for
// double (it does: the least-squares sensitivity is ~1e17).
TEST(NistFilip, DoubleModeIsAccurateOrFlagged) {
  const Dataset d = Load("Filip");
  const Fit f = Stream(d, Mode::kDouble);
  const Score s = ScoreFit(d, f);  // NIST StRD certified values
  EXPECT_TRUE(s.min_b >= 6 || f.ill_conditioned) << s.min_b;
  EXPECT_TRUE(f.ill_conditioned);
}

class NistExtended : public ::testing::TestWithParam<std::string> {};

// Extended precision with rows given to double-double accuracy: LRE >= 12 on every coefficient
// and every nonzero certified std dev of all 11 datasets (NIST StRD certified values).
TEST_P(NistExtended, LreAtLeastTwelveEverywhere) {
  const Dataset d = Load(GetParam());
  const Fit f = Stream(d, Mode::kExtended);
  ASSERT_TRUE(f.identifiable);
  const Score s = ScoreFit(d, f);
  EXPECT_GE(s.min_b, 12.0);
  if (s.has_sd) {
    EXPECT_GE(s.min_sd, 12.0);
  }
  EXPECT_FALSE(f.ill_conditioned);
}

INSTANTIATE_TEST_SUITE_P(Datasets, NistExtended, ::testing::ValuesIn(DatasetNames()),
                         [](const auto& info) { return info.param; });

}  // namespace
}  // namespace bayline::est::nist
