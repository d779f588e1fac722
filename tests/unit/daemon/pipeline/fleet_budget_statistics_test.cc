// The fleet budget's promise, through the real pipeline library (the code `bayline replay` and
// every daemon worker run): 10,000 in-control gaussian channels observed at mixed rates (mean
// intervals log-uniform in [10 s, 5 min], each interval jittered by +-20 %), one rule with a cusum
// and false_alarms_per_day B = 20. After a one-hour warm-up (rates become known), the false alarms
// raised in each following day are counted; their total over kDays days must lie in the central
// 95 % Poisson interval around B * kDays. With kDays = 2: mean 40, interval [28, 53]
// (scipy.stats.poisson.interval(0.95, 40)); measured 21 + 15 = 36 (50.0 million observations,
// about 35 s on the 2-core test machine).
//
// Why this is the right yardstick: each channel's cusum has ARL0_i = N r_i / B observations; its
// false alarms form a renewal process whose run lengths are close to geometric for ARL0 >> 1
// (common practice, no source), so the channels' counts are close to independent Poisson with
// means r_i / ARL0_i per day and the total is Poisson with mean B per day.
//
// Runs the channels one after the other (after every channel has sent its first observation, so N
// is 10,000 throughout): a channel's detector depends only on its own observations and N.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <random>
#include <string>
#include <vector>

#include "tests/unit/daemon/pipeline/test_util.h"

namespace bayline::pipeline {
namespace {

constexpr int kChannels = 10000;
constexpr double kBudget = 20;  // false alarms per day
constexpr int kDays = 2;
constexpr double kWarmup = 3600;  // s
constexpr int64_t kT0 = 1'700'000'000'000'000'000;

class AlarmCounter : public PublicationSink {
 public:
  void Publish(const std::string&, const bayline::v1::Publication& p) override {
    if (p.kind_case() != bayline::v1::Publication::kAlarm || p.alarm().state() != "raised") return;
    const double t = static_cast<double>(p.alarm().time_ns() - kT0) * 1e-9;
    if (t < kWarmup) {
      ++during_warmup;
    } else {
      ++per_day[static_cast<std::size_t>((t - kWarmup) / 86400)];
    }
  }
  int during_warmup = 0;
  std::vector<int> per_day = std::vector<int>(kDays, 0);
};

// Central 95 % interval of Poisson(mu): (ppf(0.025), ppf(0.975)), the convention of
// scipy.stats.poisson.interval(0.95, mu); for mu = 40 scipy gives (28, 53).
std::pair<int, int> PoissonInterval95(double mu) {
  double pmf = std::exp(-mu), cdf = pmf;
  int lo = -1, k = 0;
  for (;; ++k) {
    if (lo < 0 && cdf >= 0.025) lo = k;
    if (cdf >= 0.975) break;
    pmf *= mu / (k + 1);
    cdf += pmf;
  }
  return {lo, k};
}

TEST(FleetBudgetStatisticsTest, PoissonIntervalMatchesScipy) {
  // scipy.stats.poisson.interval(0.95, 40) == (28.0, 53.0); (0.95, 20) == (12.0, 29.0)
  EXPECT_EQ(PoissonInterval95(40), std::make_pair(28, 53));
  EXPECT_EQ(PoissonInterval95(20), std::make_pair(12, 29));
}

TEST(FleetBudgetStatisticsTest, TenThousandChannelsRaiseTheBudgetedFalseAlarmsPerDay) {
  const auto config = testing::ParseConfig(R"(
    rules { name: "fleet" match: "**" spec {
      model: "gaussian" estimators: "ls" publish { every_n: 4000000000 }
      detectors { kind: "cusum" false_alarms_per_day: 20 } } })");
  ASSERT_TRUE(ValidateConfig(config).ok());
  Pipeline pipeline(config);
  AlarmCounter sink;
  std::mt19937_64 rng(20261203);
  std::uniform_real_distribution<double> log_interval(std::log(10.0), std::log(300.0));
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  std::normal_distribution<double> noise(12.0, 3.0);
  const double end = kWarmup + kDays * 86400.0;

  std::vector<double> interval(kChannels), next(kChannels);
  std::vector<std::string> names(kChannels);
  bayline::v1::Observation obs;
  auto send = [&](int c, uint64_t seq) {
    obs.set_channel(names[static_cast<std::size_t>(c)]);
    obs.set_seq(seq);
    obs.set_y(noise(rng));
    obs.set_time_ns(kT0 + static_cast<int64_t>(next[static_cast<std::size_t>(c)] * 1e9));
    pipeline.Process(obs, 0, sink);
    next[static_cast<std::size_t>(c)] +=
        interval[static_cast<std::size_t>(c)] * (0.8 + 0.4 * unit(rng));
  };
  for (int c = 0; c < kChannels; ++c) {
    const auto i = static_cast<std::size_t>(c);
    names[i] = "site" + std::to_string(c / 100) + "/probe" + std::to_string(c % 100);
    interval[i] = std::exp(log_interval(rng));
    next[i] = unit(rng) * interval[i];
    send(c, 1);
  }
  ASSERT_EQ(pipeline.counters().channels, static_cast<uint64_t>(kChannels));
  uint64_t observations = kChannels;
  for (int c = 0; c < kChannels; ++c) {
    for (uint64_t seq = 2; next[static_cast<std::size_t>(c)] < end; ++seq, ++observations)
      send(c, seq);
  }

  int total = 0;
  for (int d = 0; d < kDays; ++d) total += sink.per_day[static_cast<std::size_t>(d)];
  const auto [lo, hi] = PoissonInterval95(kBudget * kDays);
  std::printf("%llu observations; false alarms during warm-up %d; per day:",
              static_cast<unsigned long long>(observations), sink.during_warmup);
  for (int n : sink.per_day) std::printf(" %d", n);
  std::printf("; total %d, 95 %% Poisson interval around %g: [%d, %d]\n", total, kBudget * kDays,
              lo, hi);
  EXPECT_GE(total, lo);
  EXPECT_LE(total, hi);
}

}  // namespace
}  // namespace bayline::pipeline
