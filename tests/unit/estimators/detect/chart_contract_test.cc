// Contract tests every chart shares (alarm.h life cycle, hold-off, non-finite input, directions,
// capture -> restore -> continue bit-identity), run over CUSUM, EWMA, Page-Hinkley and GLR.
#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <random>
#include <vector>

#include "estimators/detect/cusum.h"
#include "estimators/detect/ewma.h"
#include "estimators/detect/glr.h"
#include "estimators/detect/page_hinkley.h"
#include "tests/unit/estimators/detect/test_util.h"

namespace bayline::est {
namespace {

using testing::CaptureInto;
using testing::Mark;
using testing::SameEvent;

// Settings with a short in-control ARL (a few dozen) so alarms are frequent in short streams.
CusumOptions Frequent(CusumOptions o) {
  o.k = 0.5;
  o.h = 2.0;
  return o;
}
EwmaOptions Frequent(EwmaOptions o) {
  o.lambda = 0.2;
  o.L = 2.0;
  return o;
}
PageHinkleyOptions Frequent(PageHinkleyOptions o) {
  o.delta = 0.25;
  o.threshold = 3.0;
  return o;
}
GlrOptions Frequent(GlrOptions o) {
  o.window = 20;
  o.threshold = 2.5;
  return o;
}

template <typename Chart>
struct OptionsOf;
template <>
struct OptionsOf<Cusum> {
  using type = CusumOptions;
};
template <>
struct OptionsOf<Ewma> {
  using type = EwmaOptions;
};
template <>
struct OptionsOf<PageHinkley> {
  using type = PageHinkleyOptions;
};
template <>
struct OptionsOf<Glr> {
  using type = GlrOptions;
};

template <typename Chart>
class ChartsContractTest : public ::testing::Test {
 protected:
  using Options = typename OptionsOf<Chart>::type;
  static Options Make(std::int64_t holdoff = 0, Direction d = Direction::kBoth) {
    Options o = Frequent(Options());
    o.holdoff = holdoff;
    o.direction = d;
    return o;
  }
  // A stream with level shifts up and down, so both sides alarm.
  static std::vector<double> Stream(int n, std::uint64_t seed) {
    std::mt19937_64 rng(seed);
    std::normal_distribution<double> normal(0.0, 1.0);
    std::vector<double> z(n);
    for (int i = 0; i < n; ++i)
      z[i] = normal(rng) + ((i / 150) % 3 == 1 ? 1.5 : (i / 150) % 3 == 2 ? -1.5 : 0.0);
    return z;
  }
};

using ChartTypes = ::testing::Types<Cusum, Ewma, PageHinkley, Glr>;
TYPED_TEST_SUITE(ChartsContractTest, ChartTypes);

TYPED_TEST(ChartsContractTest, EveryRaiseIsFollowedByExactlyOneClear) {
  for (std::int64_t holdoff : {0, 3, 25}) {
    TypeParam chart(this->Make(holdoff));
    int open = 0, raises = 0;
    const auto z = this->Stream(3000, 7);
    for (int i = 0; i < 3000; ++i) {
      const DetectorEvent e = chart.Update(z[i], Mark(i));
      ASSERT_FALSE(e.raised && e.cleared);
      if (e.raised) {
        ASSERT_EQ(open, 0) << "raised twice without a clear at " << i;
        ++open;
        ++raises;
        EXPECT_GT(e.statistic, e.threshold);
        EXPECT_TRUE(e.direction == Direction::kUp || e.direction == Direction::kDown);
        EXPECT_GE(e.onset_seq, 0);
        EXPECT_LE(e.onset_seq, i);
        EXPECT_TRUE(std::isfinite(e.shift));
      }
      if (e.cleared) {
        ASSERT_EQ(open, 1) << "cleared without a raise at " << i;
        --open;
        EXPECT_LE(e.statistic, e.threshold);
      }
    }
    EXPECT_GT(raises, 5) << "holdoff " << holdoff;
  }
}

TYPED_TEST(ChartsContractTest, HoldOffIgnoresObservationsAfterAnAlarm) {
  const std::int64_t holdoff = 10;
  TypeParam chart(this->Make(holdoff));
  const auto z = this->Stream(3000, 11);
  int i = 0;
  while (i < 3000 && !chart.Update(z[i], Mark(i)).raised) ++i;
  ASSERT_LT(i, 3000);
  ++i;
  // During the hold-off even huge values change nothing: no raise, no clear, same statistic.
  const double restarted = chart.Update(0.0, Mark(i)).statistic;  // first ignored observation
  for (int j = 1; j < holdoff; ++j) {
    const DetectorEvent e = chart.Update(50.0, Mark(i + j));
    EXPECT_FALSE(e.raised || e.cleared);
    EXPECT_EQ(e.statistic, restarted);
  }
  // The hold-off is over: an in-control value clears the alarm.
  EXPECT_TRUE(chart.Update(0.0, Mark(i + holdoff)).cleared);
}

TYPED_TEST(ChartsContractTest, NonFiniteInputChangesNothing) {
  TypeParam a(this->Make(2)), b(this->Make(2));
  const auto z = this->Stream(800, 3);
  for (int i = 0; i < 800; ++i) {
    if (i % 7 == 0) {
      const DetectorEvent e = a.Update(i % 2 ? std::numeric_limits<double>::quiet_NaN()
                                             : std::numeric_limits<double>::infinity(),
                                       Mark(i));
      EXPECT_FALSE(e.raised || e.cleared);
    }
    ASSERT_TRUE(SameEvent(a.Update(z[i], Mark(i)), b.Update(z[i], Mark(i)))) << i;
  }
}

TYPED_TEST(ChartsContractTest, OneSidedChartsIgnoreTheOtherDirection) {
  TypeParam up(this->Make(0, Direction::kUp)), down(this->Make(0, Direction::kDown));
  for (int i = 0; i < 400; ++i) {
    EXPECT_FALSE(up.Update(-3.0, Mark(i)).raised) << i;
    EXPECT_FALSE(down.Update(3.0, Mark(i)).raised) << i;
  }
  bool up_raised = false, down_raised = false;
  for (int i = 400; i < 500; ++i) {
    const DetectorEvent u = up.Update(3.0, Mark(i));
    if (u.raised) {
      EXPECT_EQ(u.direction, Direction::kUp);
    }
    up_raised |= u.raised;
    const DetectorEvent d = down.Update(-3.0, Mark(i));
    if (d.raised) {
      EXPECT_EQ(d.direction, Direction::kDown);
    }
    down_raised |= d.raised;
  }
  EXPECT_TRUE(up_raised);
  EXPECT_TRUE(down_raised);
}

TYPED_TEST(ChartsContractTest, CaptureRestoreContinueIsBitIdentical) {
  const auto z = this->Stream(4000, 5);
  // Capture at several points, including mid-hold-off and during an active alarm.
  for (int cut : {0, 1, 137, 151, 1000, 2222}) {
    TypeParam original(this->Make(4)), restored(this->Make(4));
    for (int i = 0; i < cut; ++i) original.Update(z[i], Mark(i));
    CaptureInto(original, &restored);
    for (int i = cut; i < 4000; ++i)
      ASSERT_TRUE(SameEvent(original.Update(z[i], Mark(i)), restored.Update(z[i], Mark(i))))
          << "cut " << cut << " step " << i;
  }
}

TYPED_TEST(ChartsContractTest, TruncatedOrPaddedStateIsRejectedAndChangesNothing) {
  TypeParam chart(this->Make(1));
  const auto z = this->Stream(300, 9);
  for (int i = 0; i < 300; ++i) chart.Update(z[i], Mark(i));
  std::vector<double> buf;
  StateWriter w(&buf);
  chart.state().Pack(w);
  std::vector<double> shorter(buf.begin(), buf.end() - 1), longer = buf;
  longer.push_back(0.0);
  typename TypeParam::State s;
  StateReader r1(shorter);
  EXPECT_FALSE(s.Unpack(r1).ok() && r1.status().ok());
  StateReader r2(longer);
  const Status st = s.Unpack(r2);
  EXPECT_FALSE(st.ok() && r2.status().ok());
}

TYPED_TEST(ChartsContractTest, ValidateRejectsNegativeHoldoffAndNoDirection) {
  auto o = this->Make();
  EXPECT_TRUE(o.Validate().ok());
  o.holdoff = -1;
  EXPECT_EQ(o.Validate().code(), ErrorCode::kInvalidConfig);
  o = this->Make();
  o.direction = Direction::kNone;
  EXPECT_EQ(o.Validate().code(), ErrorCode::kInvalidConfig);
}

}  // namespace
}  // namespace bayline::est
