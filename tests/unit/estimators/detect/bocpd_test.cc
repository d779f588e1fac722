// Unit tests of Bocpd: input checks, detection of a change in each conjugate model, pruning bound
// and bounded storage, alarm life cycle, capture / restore.
#include "estimators/detect/bocpd.h"

#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <cstring>
#include <random>
#include <vector>

#include "tests/unit/estimators/detect/test_util.h"

namespace bayline::est {
namespace {

using testing::BitEqual;
using testing::Flat;
using testing::Packed;

Sample Y(double y) {
  Sample s;
  s.y = y;
  return s;
}
Sample Count(double y, double exposure) {
  Sample s = Y(y);
  s.exposure = exposure;
  return s;
}
Sample Successes(double y, double trials) {
  Sample s = Y(y);
  s.trials = trials;
  return s;
}

TEST(BocpdTest, OptionsValidateRejectsEachBadField) {
  Bocpd::Options o;
  EXPECT_TRUE(o.Validate().ok());
  auto bad = [](auto mutate) {
    Bocpd::Options x;
    mutate(x);
    return x.Validate().code();
  };
  EXPECT_EQ(bad([](auto& x) { x.hazard = 0; }), ErrorCode::kInvalidConfig);
  EXPECT_EQ(bad([](auto& x) { x.hazard = 1; }), ErrorCode::kInvalidConfig);
  EXPECT_EQ(bad([](auto& x) { x.prior_kappa = 0; }), ErrorCode::kInvalidConfig);
  EXPECT_EQ(bad([](auto& x) { x.prior_rate = NAN; }), ErrorCode::kInvalidConfig);
  EXPECT_EQ(bad([](auto& x) { x.prior_beta = -1; }), ErrorCode::kInvalidConfig);
  EXPECT_EQ(bad([](auto& x) { x.max_run_lengths = 1; }), ErrorCode::kInvalidConfig);
  EXPECT_EQ(bad([](auto& x) { x.prune_epsilon = 1; }), ErrorCode::kInvalidConfig);
  EXPECT_EQ(bad([](auto& x) { x.window = 0; }), ErrorCode::kInvalidConfig);
  EXPECT_EQ(bad([](auto& x) { x.threshold = 0; }), ErrorCode::kInvalidConfig);
  EXPECT_EQ(bad([](auto& x) { x.holdoff = -1; }), ErrorCode::kInvalidConfig);
}

TEST(BocpdTest, BadInputIsRejectedAndChangesNothing) {
  struct Case {
    BocpdModel model;
    Sample s;
    ErrorCode code;
  };
  const std::vector<Case> cases = {
      {BocpdModel::kNormalGamma, Y(NAN), ErrorCode::kNonFinite},
      {BocpdModel::kNormalGamma, Y(INFINITY), ErrorCode::kNonFinite},
      {BocpdModel::kGammaPoisson, Count(-1, 1), ErrorCode::kOutOfDomain},
      {BocpdModel::kGammaPoisson, Count(1.5, 1), ErrorCode::kOutOfDomain},
      {BocpdModel::kGammaPoisson, Count(2, 0), ErrorCode::kOutOfDomain},
      {BocpdModel::kBetaBinomial, Successes(6, 5), ErrorCode::kOutOfDomain},
      {BocpdModel::kBetaBinomial, Successes(-1, 5), ErrorCode::kOutOfDomain},
      {BocpdModel::kBetaBinomial, Successes(1, 2.5), ErrorCode::kOutOfDomain},
  };
  for (const Case& c : cases) {
    Bocpd::Options o;
    o.model = c.model;
    Bocpd d(o);
    const Sample good = c.model == BocpdModel::kNormalGamma    ? Y(0.3)
                        : c.model == BocpdModel::kGammaPoisson ? Count(3, 1)
                                                               : Successes(2, 5);
    for (int i = 0; i < 5; ++i) ASSERT_TRUE(d.Update(good, {i, NAN}, nullptr).ok());
    const std::vector<double> before = Packed(d);
    DetectorEvent ev;
    ev.statistic = 42;
    const Status st = d.Update(c.s, {5, NAN}, &ev);
    EXPECT_EQ(st.code(), c.code) << st.ToString();
    EXPECT_TRUE(BitEqual(Packed(d), before));
    EXPECT_EQ(ev.statistic, 42);  // untouched
  }
  Bocpd d(Bocpd::Options{});
  Sample weighted = Y(1);
  weighted.weight = 2;
  EXPECT_EQ(d.Update(weighted, {0, NAN}, nullptr).code(), ErrorCode::kInvalidWeight);
  EXPECT_TRUE(d.state().runs.empty());
}

// A mean step of 3 sd after 300 observations: raised within a few observations, onset near the
// true change point, MAP run length counting from there afterwards.
TEST(BocpdTest, NormalGammaDetectsMeanStepAndNamesOnset) {
  Bocpd::Options o;
  o.hazard = 1.0 / 200;
  o.prior_mean = 0;
  o.prior_kappa = 0.1;
  o.prior_shape = 2;
  o.prior_rate = 2;
  Bocpd d(o);
  std::mt19937_64 rng(11);
  std::normal_distribution<double> n01;
  int raised_at = -1;
  std::int64_t onset = -1;
  for (int t = 0; t < 340; ++t) {
    const double y = 10 + (t >= 300 ? 3.0 : 0.0) + n01(rng);
    DetectorEvent ev;
    ASSERT_TRUE(d.Update(Y(y), {1000 + t, 0.5 * t}, &ev).ok());
    if (ev.raised && raised_at < 0 && t >= 20) {
      raised_at = t;
      onset = ev.onset_seq;
      EXPECT_GT(ev.shift, 1.5);
      EXPECT_EQ(ev.direction, Direction::kUp);
      EXPECT_DOUBLE_EQ(ev.onset_time, 0.5 * static_cast<double>(onset - 1000));
    }
  }
  ASSERT_GE(raised_at, 300) << "false alarm before the step";
  EXPECT_LE(raised_at, 306);
  EXPECT_NEAR(static_cast<double>(onset), 1300, 2);
  // After the alarm the detector restarted from its prior: the MAP run is the segment since then.
  EXPECT_NEAR(static_cast<double>(d.map_run_length()), 339 - raised_at, 3);
}

TEST(BocpdTest, GammaPoissonDetectsRateStepWithExposure) {
  Bocpd::Options o;
  o.model = BocpdModel::kGammaPoisson;
  o.hazard = 1.0 / 500;
  o.prior_shape = 1;
  o.prior_rate = 0.1;
  Bocpd d(o);
  std::mt19937_64 rng(5);
  int first_raise = -1;
  std::int64_t onset = -1;
  for (int t = 0; t < 500; ++t) {
    const double exposure = 1 + (t % 3);  // rate per unit exposure 4, then 8
    std::poisson_distribution<int> pois((t >= 400 ? 8.0 : 4.0) * exposure);
    DetectorEvent ev;
    ASSERT_TRUE(d.Update(Count(pois(rng), exposure), {t, NAN}, &ev).ok());
    if (ev.raised && first_raise < 0) {
      first_raise = t;
      onset = ev.onset_seq;
      EXPECT_NEAR(ev.shift, 4.0, 2.0);
    }
  }
  ASSERT_GE(first_raise, 400) << "false alarm before the step";
  EXPECT_LE(first_raise, 410);
  EXPECT_NEAR(static_cast<double>(onset), 400, 3);
}

TEST(BocpdTest, BetaBinomialDetectsProbabilityStep) {
  Bocpd::Options o;
  o.model = BocpdModel::kBetaBinomial;
  o.hazard = 1.0 / 500;
  Bocpd d(o);
  std::mt19937_64 rng(9);
  int first_raise = -1;
  for (int t = 0; t < 400; ++t) {
    std::binomial_distribution<int> bin(50, t >= 300 ? 0.35 : 0.2);
    DetectorEvent ev;
    ASSERT_TRUE(d.Update(Successes(bin(rng), 50), {t, NAN}, &ev).ok());
    if (ev.raised && first_raise < 0) {
      first_raise = t;
      EXPECT_NEAR(ev.shift, 0.15, 0.08);
      EXPECT_NEAR(static_cast<double>(ev.onset_seq), 300, 3);
    }
  }
  ASSERT_GE(first_raise, 300) << "false alarm before the step";
  EXPECT_LE(first_raise, 306);
}

// Storage stays inside the preallocated capacity, the cap holds, and the discarded mass obeys the
// documented per-step bound.
TEST(BocpdTest, PruningKeepsStorageBoundedAndDiscardedMassWithinBound) {
  Bocpd::Options o;
  o.hazard = 1.0 / 50;
  o.max_run_lengths = 40;
  o.prune_epsilon = 1e-6;
  Bocpd d(o);
  std::mt19937_64 rng(3);
  std::normal_distribution<double> n01;
  ASSERT_TRUE(d.Update(Y(0), {0, NAN}, nullptr).ok());
  const Bocpd::Run* storage = d.state().runs.data();
  const std::size_t capacity = d.state().runs.capacity();
  double previous_discarded = 0;
  for (int t = 1; t < 3000; ++t) {
    const double mean = (t / 400) % 2 == 0 ? 0.0 : 1.0;
    ASSERT_TRUE(d.Update(Y(mean + n01(rng)), {t, NAN}, nullptr).ok());
    const std::size_t k = d.state().runs.size();
    ASSERT_LE(k, 40u);
    const double step = d.state().discarded_mass - previous_discarded;
    previous_discarded = d.state().discarded_mass;
    // header bound: < (K+1) eps for the epsilon rule plus <= 1/(C+1) for one capped run
    ASSERT_LE(step, 41 * 1e-6 + 1.0 / 41) << "t=" << t;
    if (d.state().runs.empty()) continue;  // restarted from the prior by an alarm
    double total = 0;
    for (const auto& r : d.state().runs) total += std::exp(r.log_mass);
    ASSERT_NEAR(total, 1.0, 1e-12);
  }
  EXPECT_EQ(d.state().runs.data(), storage);  // never reallocated
  EXPECT_EQ(d.state().runs.capacity(), capacity);
}

// The daemon copies detector slots (to roll back a failed update): a copy keeps the preallocated
// capacity and continues exactly like the original.
TEST(BocpdTest, CopyKeepsCapacityAndContinuesIdentically) {
  Bocpd::Options o;
  o.max_run_lengths = 50;
  Bocpd a(o);
  std::mt19937_64 rng(13);
  std::normal_distribution<double> n01;
  for (int t = 0; t < 20; ++t) ASSERT_TRUE(a.Update(Y(n01(rng)), {t, NAN}, nullptr).ok());
  Bocpd b(a);
  Bocpd c(Bocpd::Options{});
  c = a;
  const Bocpd::Run* storage_b = b.state().runs.data();
  const Bocpd::Run* storage_c = c.state().runs.data();
  EXPECT_GE(b.state().runs.capacity(), 51u);
  for (int t = 20; t < 400; ++t) {
    const double y = n01(rng) + (t > 200 ? 3 : 0);
    DetectorEvent ea, eb, ec;
    ASSERT_TRUE(a.Update(Y(y), {t, NAN}, &ea).ok());
    ASSERT_TRUE(b.Update(Y(y), {t, NAN}, &eb).ok());
    ASSERT_TRUE(c.Update(Y(y), {t, NAN}, &ec).ok());
    ASSERT_TRUE(BitEqual(Flat(ea), Flat(eb)));
    ASSERT_TRUE(BitEqual(Flat(ea), Flat(ec)));
  }
  EXPECT_TRUE(BitEqual(Packed(a), Packed(b)));
  EXPECT_EQ(b.state().runs.data(), storage_b);  // never reallocated
  EXPECT_EQ(c.state().runs.data(), storage_c);
}

TEST(BocpdTest, AlarmLifeCycleRaisesOnceHoldsOffThenClears) {
  Bocpd::Options o;
  o.hazard = 1.0 / 100;
  o.holdoff = 5;
  o.prior_kappa = 0.1;
  o.prior_shape = 2;
  o.prior_rate = 2;
  Bocpd d(o);
  std::mt19937_64 rng(21);
  std::normal_distribution<double> n01;
  int raised = 0, cleared = 0, raise_t = -1, clear_t = -1;
  for (int t = 0; t < 200; ++t) {
    DetectorEvent ev;
    ASSERT_TRUE(d.Update(Y((t >= 100 ? 5.0 : 0.0) + n01(rng)), {t, NAN}, &ev).ok());
    if (ev.raised) {
      ++raised;
      raise_t = t;
      EXPECT_GE(ev.statistic, ev.threshold);  // the statistic that crossed, not the restart
      EXPECT_EQ(ev.threshold, o.threshold);
    }
    if (ev.cleared) {
      ++cleared;
      clear_t = t;
    }
    EXPECT_FALSE(ev.raised && ev.cleared);
  }
  EXPECT_EQ(raised, 1);
  EXPECT_EQ(cleared, 1);
  EXPECT_GE(raise_t, 100);
  EXPECT_GT(clear_t, raise_t + 5);  // not inside the hold-off
}

TEST(BocpdTest, CaptureRestoreContinuesBitIdentically) {
  for (BocpdModel model :
       {BocpdModel::kNormalGamma, BocpdModel::kGammaPoisson, BocpdModel::kBetaBinomial}) {
    Bocpd::Options o;
    o.model = model;
    o.max_run_lengths = 60;
    o.prune_epsilon = 1e-8;
    o.holdoff = 3;
    Bocpd a(o);
    std::mt19937_64 rng(7);
    std::poisson_distribution<int> pois(3);
    auto sample = [&](int t) {
      const int k = pois(rng) + (t > 150 ? 4 : 0);
      if (model == BocpdModel::kNormalGamma) return Y(0.5 * k);
      if (model == BocpdModel::kGammaPoisson) return Count(k, 1.5);
      return Successes(std::min(k, 10), 10);
    };
    for (int t = 0; t < 120; ++t) ASSERT_TRUE(a.Update(sample(t), {t, 1.0 * t}, nullptr).ok());
    std::vector<double> packed = Packed(a);
    Bocpd::State s;
    StateReader r(packed);
    ASSERT_TRUE(s.Unpack(r).ok());
    Bocpd b(o);
    ASSERT_TRUE(b.Restore(s).ok());
    for (int t = 120; t < 300; ++t) {
      const Sample x = sample(t);
      DetectorEvent ea, eb;
      ASSERT_TRUE(a.Update(x, {t, 1.0 * t}, &ea).ok());
      ASSERT_TRUE(b.Update(x, {t, 1.0 * t}, &eb).ok());
      ASSERT_TRUE(BitEqual(Flat(ea), Flat(eb))) << "t=" << t;
    }
    EXPECT_TRUE(BitEqual(Packed(a), Packed(b)));

    // Truncated state: Unpack fails; Restore of a malformed state fails and changes nothing.
    packed.pop_back();
    Bocpd::State t2;
    StateReader r2(packed);
    EXPECT_EQ(t2.Unpack(r2).code(), ErrorCode::kInvalidState);
    Bocpd::State broken = a.state();
    broken.runs[0].log_mass = 0.5;
    const auto before = Packed(b);
    EXPECT_EQ(b.Restore(broken).code(), ErrorCode::kInvalidState);
    EXPECT_TRUE(BitEqual(Packed(b), before));
  }
}

// In-control false alarms: measured and printed (figure for the report). Data drawn from the
// prior-predictive of one segment, i.e. the model is right and nothing changes. The check
// "fewer alarms than the hazard would predict changes" is common practice, no source.
TEST(BocpdTest, InControlFalseAlarmRateIsMeasured) {
  for (double hazard : {1.0 / 100, 1.0 / 1000}) {
    Bocpd::Options o;
    o.hazard = hazard;
    o.prior_kappa = 0.1;
    o.prior_shape = 2;
    o.prior_rate = 2;
    Bocpd d(o);
    std::mt19937_64 rng(1234);
    std::normal_distribution<double> n01;
    const int n = 20000;
    int alarms = 0;
    double runs = 0;
    for (int t = 0; t < n; ++t) {
      DetectorEvent ev;
      ASSERT_TRUE(d.Update(Y(3 + 1.5 * n01(rng)), {t, NAN}, &ev).ok());
      alarms += ev.raised;
      runs += static_cast<double>(d.state().runs.size());
    }
    const double rate = static_cast<double>(alarms) / n;
    std::printf(
        "BOCPD in-control: hazard %.4g window %d threshold %.2g -> %d alarms in %d obs (%.3g per "
        "obs);"
        " mean retained run lengths %.1f, pruned mass %.2g per obs (epsilon %.0e, cap %d)\n",
        hazard, o.window, o.threshold, alarms, n, rate, runs / n, d.state().discarded_mass / n,
        o.prune_epsilon, o.max_run_lengths);
    EXPECT_LT(rate, hazard);
  }
}

}  // namespace
}  // namespace bayline::est
