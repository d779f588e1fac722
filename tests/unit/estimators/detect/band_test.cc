// Unit tests of ToleranceBand: raise / clear with hysteresis, hold-off, onset, input checks,
// restore, and simulated in-control behaviour (synthetic reports and a real RLS gain estimate).
#include "estimators/detect/band.h"

#include <gtest/gtest.h>

#include <cmath>
#include <cstring>
#include <random>
#include <vector>

#include "estimators/ls/rls.h"
#include "tests/unit/estimators/detect/test_util.h"

namespace bayline::est {
namespace {

using testing::BitEqual;
using testing::Packed;

ParameterReport Report1(double value, double half_width) {
  ParameterReport r;
  r.value = {value};
  r.std_error = {half_width / 1.96};
  r.lower = {value - half_width};
  r.upper = {value + half_width};
  r.identifiable = true;
  return r;
}

ToleranceBand::Options GainBand() {
  ToleranceBand::Options o;
  o.lo = 0.98;
  o.hi = 1.02;
  return o;
}

TEST(ToleranceBandTest, RaisesOnlyWhenIntervalIsWhollyOutsideAndNamesOnset) {
  ToleranceBand d(GainBand());
  struct Step {
    double value, half;
    bool raised;
  };
  // value leaves the band at seq 2 (1.025) but the interval still overlaps until seq 4.
  const std::vector<Step> steps = {{1.00, 0.01, false},  {1.015, 0.01, false}, {1.025, 0.01, false},
                                   {1.028, 0.01, false}, {1.035, 0.01, true},  {1.04, 0.01, false}};
  for (std::size_t i = 0; i < steps.size(); ++i) {
    DetectorEvent ev;
    ASSERT_TRUE(d.Update(Report1(steps[i].value, steps[i].half),
                         {static_cast<std::int64_t>(i), 10.0 + i}, &ev)
                    .ok());
    EXPECT_EQ(ev.raised, steps[i].raised) << i;
    EXPECT_NEAR(ev.statistic,
                std::max(0.98 - (steps[i].value + 0.01), (steps[i].value - 0.01) - 1.02), 1e-15);
    if (ev.raised) {
      EXPECT_EQ(ev.direction, Direction::kUp);
      EXPECT_EQ(ev.onset_seq, 2);
      EXPECT_EQ(ev.onset_time, 12.0);
      EXPECT_NEAR(ev.shift, 1.035 - 1.02, 1e-15);
      EXPECT_EQ(ev.threshold, 0.0);
    }
  }
  // Below the band: direction down.
  ToleranceBand low(GainBand());
  DetectorEvent ev;
  ASSERT_TRUE(low.Update(Report1(0.95, 0.02), {0, NAN}, &ev).ok());
  EXPECT_TRUE(ev.raised);
  EXPECT_EQ(ev.direction, Direction::kDown);
  EXPECT_NEAR(ev.shift, 0.95 - 0.98, 1e-15);
}

TEST(ToleranceBandTest, ClearsWhenIntervalOverlapsShrunkBandAfterHoldOff) {
  ToleranceBand::Options o = GainBand();
  o.hysteresis = 0.005;  // clear needs overlap with [0.985, 1.015]
  o.holdoff = 2;
  ToleranceBand d(o);
  DetectorEvent ev;
  ASSERT_TRUE(d.Update(Report1(1.05, 0.01), {0, NAN}, &ev).ok());
  ASSERT_TRUE(ev.raised);
  // Inside the band but within the hold-off: nothing.
  for (int i = 1; i <= 2; ++i) {
    ASSERT_TRUE(d.Update(Report1(1.0, 0.01), {i, NAN}, &ev).ok());
    EXPECT_FALSE(ev.raised || ev.cleared);
  }
  // Overlaps [0.98, 1.02] but not [0.985, 1.015]: hysteresis keeps the alarm.
  ASSERT_TRUE(d.Update(Report1(1.027, 0.01), {3, NAN}, &ev).ok());
  EXPECT_FALSE(ev.raised || ev.cleared);
  ASSERT_TRUE(d.Update(Report1(1.024, 0.01), {4, NAN}, &ev).ok());
  EXPECT_TRUE(ev.cleared);
  EXPECT_FALSE(d.state().alarm_active);
  // Outside again: a new alarm.
  ASSERT_TRUE(d.Update(Report1(1.06, 0.01), {5, NAN}, &ev).ok());
  EXPECT_TRUE(ev.raised);
}

TEST(ToleranceBandTest, UnidentifiableReportIsNothingYet) {
  ToleranceBand d(GainBand());
  ParameterReport r;
  r.value = {kNaN};
  r.lower = {kNaN};
  r.upper = {kNaN};
  r.identifiable = false;
  DetectorEvent ev;
  ASSERT_TRUE(d.Update(r, {0, NAN}, &ev).ok());
  EXPECT_FALSE(ev.raised || ev.cleared);
  EXPECT_TRUE(std::isnan(ev.statistic));
  // Identifiable but no interval yet (no degrees of freedom): also nothing yet.
  r.identifiable = true;
  r.value = {1.5};
  ASSERT_TRUE(d.Update(r, {1, NAN}, &ev).ok());
  EXPECT_FALSE(ev.raised || ev.cleared);
  EXPECT_TRUE(std::isnan(ev.statistic));
}

TEST(ToleranceBandTest, BadInputRejectedAndStateRestoresBitIdentically) {
  ToleranceBand::Options o = GainBand();
  o.parameter = 1;
  o.holdoff = 3;
  ToleranceBand d(o);
  ParameterReport two = Report1(0.5, 0.1);
  two.value.push_back(1.1);
  two.lower.push_back(1.05);
  two.upper.push_back(1.15);
  DetectorEvent ev;
  ASSERT_TRUE(d.Update(two, {7, 1.0}, &ev).ok());
  ASSERT_TRUE(ev.raised);
  const auto before = Packed(d);
  EXPECT_EQ(d.Update(Report1(1.0, 0.01), {8, NAN}, &ev).code(),
            ErrorCode::kOutOfDomain);  // no index 1
  ParameterReport nan_report = two;
  nan_report.value[1] = NAN;
  EXPECT_EQ(d.Update(nan_report, {8, NAN}, &ev).code(), ErrorCode::kNonFinite);
  ParameterReport inverted = two;
  std::swap(inverted.lower[1], inverted.upper[1]);
  EXPECT_EQ(d.Update(inverted, {8, NAN}, &ev).code(), ErrorCode::kOutOfDomain);
  EXPECT_TRUE(BitEqual(Packed(d), before));

  ToleranceBand::State s;
  StateReader r(before);
  ASSERT_TRUE(s.Unpack(r).ok());
  ToleranceBand e(o);
  ASSERT_TRUE(e.Restore(s).ok());
  for (int i = 0; i < 10; ++i) {
    ParameterReport rep = two;
    rep.value[1] = 1.0 + 0.01 * i;
    rep.lower[1] = rep.value[1] - 0.02;
    rep.upper[1] = rep.value[1] + 0.02;
    DetectorEvent a, b;
    ASSERT_TRUE(d.Update(rep, {8 + i, NAN}, &a).ok());
    ASSERT_TRUE(e.Update(rep, {8 + i, NAN}, &b).ok());
    EXPECT_EQ(a.raised, b.raised);
    EXPECT_EQ(a.cleared, b.cleared);
    EXPECT_EQ(a.onset_seq, b.onset_seq);
  }
  EXPECT_TRUE(BitEqual(Packed(d), Packed(e)));
  auto truncated = before;
  truncated.pop_back();
  StateReader rt(truncated);
  EXPECT_EQ(s.Unpack(rt).code(), ErrorCode::kInvalidState);
  ToleranceBand::State bad = d.state();
  bad.holdoff_left = 4;  // above the option
  EXPECT_EQ(e.Restore(bad).code(), ErrorCode::kInvalidState);

  ToleranceBand::Options invalid = GainBand();
  invalid.hysteresis = 0.03;
  EXPECT_EQ(invalid.Validate().code(), ErrorCode::kInvalidConfig);
  invalid = GainBand();
  invalid.lo = 1.05;
  EXPECT_EQ(invalid.Validate().code(), ErrorCode::kInvalidConfig);
}

// In control by >= 4 standard errors: the interval (+/- 1.96 se) can only lie outside the band
// after an error of more than 5.96 se, probability about 1.3e-9 per report (normal tail,
// common practice, no source), so 1e6 independent reports should give no alarm.
TEST(ToleranceBandTest, NeverAlarmsWhenTruthIsInsideByFourStandardErrors) {
  std::mt19937_64 rng(31);
  std::normal_distribution<double> n01;
  const double se = 0.005, truth = 1.02 - 4 * se;  // 4 se inside the upper edge
  ToleranceBand d(GainBand());
  int alarms = 0;
  for (int i = 0; i < 1000000; ++i) {
    DetectorEvent ev;
    ASSERT_TRUE(d.Update(Report1(truth + se * n01(rng), 1.96 * se), {i, NAN}, &ev).ok());
    alarms += ev.raised;
  }
  EXPECT_EQ(alarms, 0);
}

// The calibration engineer's use: a probe gain g estimated by RLS with forgetting (lambda 0.98,
// memory about 50 observations), y = g x + e. Truth inside the band by about 5 standard errors:
// no alarm in 1e5 observations; truth 0.03 above the upper edge: alarm soon after the estimate
// has converged.
TEST(ToleranceBandTest, RlsGainInsideBandNeverAlarmsAndOutsideAlarms) {
  for (double gain : {1.0, 1.05}) {
    RlsOptions ro;
    ro.forgetting.lambda = 0.98;
    Rls rls(ro, 1);
    ToleranceBand d(GainBand());
    std::mt19937_64 rng(41);
    std::uniform_real_distribution<double> ux(1.0, 2.0);
    std::normal_distribution<double> n01;
    int alarms = 0, first = -1;
    double max_se = 0;
    for (int t = 0; t < 100000; ++t) {
      const double x = ux(rng);
      Sample s;
      s.x = std::span<const double>(&x, 1);
      s.y = gain * x + 0.04 * n01(rng);
      ASSERT_TRUE(rls.Update(s).ok());
      const ParameterReport rep = rls.Report(0.95);
      if (t >= 100) max_se = std::max(max_se, rep.std_error[0]);
      DetectorEvent ev;
      ASSERT_TRUE(d.Update(rep, {t, NAN}, &ev).ok());
      if (ev.raised) {
        ++alarms;
        if (first < 0) first = t;
      }
    }
    if (gain == 1.0) {
      EXPECT_LT(max_se, 0.02 / 3);  // the premise: the truth is inside by > 3 se throughout
      EXPECT_EQ(alarms, 0);
    } else {
      EXPECT_GE(alarms, 1);
      EXPECT_LT(first, 20);
    }
  }
}

}  // namespace
}  // namespace bayline::est
