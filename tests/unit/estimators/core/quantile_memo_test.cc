// The per-thread quantile memo: it holds exactly what was stored, never answers for an empty slot
// or another key, and the quantile functions return bit-identical values whatever it holds.
#include "estimators/core/quantile_memo.h"

#include <gtest/gtest.h>

#include <bit>
#include <cmath>
#include <cstdint>
#include <limits>
#include <thread>
#include <vector>

#include "estimators/core/distributions.h"

namespace bayline::est::dist {
namespace {

TEST(QuantileMemoTest, HoldsExactlyTheStoredKeys) {
  internal::QuantileMemo memo;
  double v = 0;
  EXPECT_FALSE(memo.Find(0.975, 10.0, &v));  // empty
  memo.Store(0.975, 10.0, 2.228);
  ASSERT_TRUE(memo.Find(0.975, 10.0, &v));
  EXPECT_EQ(v, 2.228);
  EXPECT_FALSE(memo.Find(0.975, std::nextafter(10.0, 11.0), &v));  // one ulp away
  EXPECT_FALSE(memo.Find(0.025, 10.0, &v));
  // Many more keys than slots: whatever is found is what was stored for that very key.
  for (int i = 0; i < 10 * static_cast<int>(internal::QuantileMemo::kSlots); ++i) {
    memo.Store(0.5, 1.0 + i, -i);
  }
  int found = 0;
  for (int i = 0; i < 10 * static_cast<int>(internal::QuantileMemo::kSlots); ++i) {
    if (memo.Find(0.5, 1.0 + i, &v)) {
      EXPECT_EQ(v, -i);
      ++found;
    }
  }
  EXPECT_GT(found, 0);
  EXPECT_LE(found, static_cast<int>(internal::QuantileMemo::kSlots));
}

// Each thread starts with an empty memo: the same keys asked in opposite orders, with enough other
// keys between to evict entries, must give bit-identical quantiles.
TEST(QuantileMemoTest, QuantilesDoNotDependOnWhatTheMemoHolds) {
  std::vector<std::pair<double, double>> keys;
  for (double p : {0.005, 0.025, 0.05, 0.5, 0.95, 0.975, 0.995}) {
    for (int k = 1; k <= 700; ++k) keys.emplace_back(p, 0.5 * k + (k % 7 == 0 ? 0.25 : 0.0));
  }
  auto run = [&](bool reverse, std::vector<uint64_t>* out) {
    out->assign(2 * keys.size(), 0);
    for (int pass = 0; pass < 2; ++pass) {  // the second pass hits the memo where it kept entries
      for (std::size_t j = 0; j < keys.size(); ++j) {
        const std::size_t i = reverse ? keys.size() - 1 - j : j;
        const auto [p, a] = keys[i];
        const uint64_t t = std::bit_cast<uint64_t>(StudentTQuantile(p, a));
        const uint64_t g = std::bit_cast<uint64_t>(GammaQuantile(p, a, 2.0));
        if (pass == 0) {
          (*out)[2 * i] = t;
          (*out)[2 * i + 1] = g;
        } else {
          EXPECT_EQ((*out)[2 * i], t);
          EXPECT_EQ((*out)[2 * i + 1], g);
        }
      }
    }
  };
  std::vector<uint64_t> forward, backward;
  std::thread a([&] { run(false, &forward); });
  a.join();
  std::thread b([&] { run(true, &backward); });
  b.join();
  EXPECT_EQ(forward, backward);
  // Rate scaling is applied after the memo: Gamma(shape, rate) quantile = unit-rate quantile /
  // rate.
  EXPECT_EQ(GammaQuantile(0.975, 12.5, 4.0), GammaQuantile(0.975, 12.5, 1.0) / 4.0);
}

}  // namespace
}  // namespace bayline::est::dist
