// Channel blocks (daemon/pipeline/channel.h) and the InlineVariant that sizes each estimator slot
// for its own estimator (daemon/pipeline/inline_variant.h).
#include "daemon/pipeline/channel.h"

#include <gtest/gtest.h>

#include <cstdint>
#include <memory>
#include <string>
#include <vector>

#include "daemon/pipeline/daemon_config.h"
#include "daemon/pipeline/inline_variant.h"
#include "daemon/pipeline/rule_set.h"

namespace bayline::pipeline {
namespace {

// Counts live objects, to check that construction and Destroy pair up.
struct Counted {
  explicit Counted(int* live, int v) : live_(live), value(v) { ++*live_; }
  Counted(const Counted& o) : live_(o.live_), value(o.value) { ++*live_; }
  ~Counted() { --*live_; }
  int* live_;
  int value;
};
struct alignas(32) Wide {
  double v[5] = {1, 2, 3, 4, 5};
};
using TestVariant = InlineVariant<char, Counted, Wide>;

TEST(InlineVariantTest, StorageIsSizedPerAlternative) {
  EXPECT_EQ(TestVariant::kAlignment, 32u);
  EXPECT_EQ(TestVariant::kHeaderBytes, 32u);
  EXPECT_EQ(TestVariant::StorageSizeOf<char>(), 32u + 32u);
  EXPECT_EQ(TestVariant::StorageSizeOf<Wide>(), 32u + 64u);
  EXPECT_EQ(TestVariant::StorageSize(2), TestVariant::StorageSizeOf<Wide>());
  EXPECT_EQ(TestVariant::kIndexOf<Counted>, 1u);

  using Small = InlineVariant<uint8_t, double>;
  EXPECT_EQ(Small::kHeaderBytes, 8u);
  EXPECT_EQ(Small::StorageSizeOf<uint8_t>(), 16u);
  EXPECT_EQ(Small::StorageSizeOf<double>(), 16u);
}

TEST(InlineVariantTest, VisitsTheHeldAlternativeAndDestroysItOnce) {
  int live = 0;
  alignas(32) std::byte storage[TestVariant::StorageSizeOf<Counted>()];
  auto* v =
      ::new (storage) TestVariant(std::in_place_type<Counted>, [&] { return Counted(&live, 41); });
  EXPECT_EQ(live, 1);
  EXPECT_EQ(v->index(), 1u);
  EXPECT_EQ(v->get_if<Wide>(), nullptr);
  ASSERT_NE(v->get_if<Counted>(), nullptr);
  v->get_if<Counted>()->value += 1;
  const TestVariant& cv = *v;
  const int seen = cv.Visit([](const auto& x) -> int {
    if constexpr (std::is_same_v<std::decay_t<decltype(x)>, Counted>) return x.value;
    return -1;
  });
  EXPECT_EQ(seen, 42);
  v->Destroy();
  EXPECT_EQ(live, 0);

  alignas(32) std::byte wide_storage[TestVariant::StorageSizeOf<Wide>()];
  auto* w = ::new (wide_storage) TestVariant(std::in_place_type<Wide>, [] { return Wide(); });
  ASSERT_NE(w->get_if<Wide>(), nullptr);
  EXPECT_EQ(reinterpret_cast<std::uintptr_t>(w->get_if<Wide>()) % 32, 0u);
  EXPECT_EQ(w->get_if<Wide>()->v[4], 5.0);
  w->Destroy();
}

// The default rule's spec for `model` (gaussian, or linear with an intercept and `regressors`).
std::shared_ptr<const ResolvedSpec> SpecOf(Model model, uint32_t regressors) {
  RuleSet rules;
  EXPECT_TRUE(rules.Build(DefaultConfig()).ok());
  std::shared_ptr<const ResolvedSpec> spec;
  EXPECT_TRUE(rules.Resolve(0, model, regressors, &spec).ok());
  return spec;
}

TEST(ChannelTest, GaussianBlockHoldsEachEstimatorAtItsOwnSize) {
  const auto spec = SpecOf(Model::kGaussian, 0);
  ASSERT_EQ(spec->estimators.size(), 3u);
  ASSERT_EQ(spec->detectors.size(), 1u);
  const std::string name = "coldstore/site3/probe123456";
  ChannelPtr ch = Channel::Create(spec, name);
  EXPECT_EQ(ch->name(), name);
  EXPECT_EQ(ch->estimator_count(), 3u);
  EXPECT_EQ(ch->detectors().size(), 1u);
  EXPECT_FALSE(ch->alarm_active());

  using Impl = EstimatorSlot::Impl;
  EXPECT_EQ(EstimatorSlot::StorageSize(*spec, EstimatorKind::kLs),
            Impl::StorageSizeOf<EstimatorSlot::GaussianLs>());
  EXPECT_EQ(EstimatorSlot::StorageSize(*spec, EstimatorKind::kMl),
            Impl::StorageSizeOf<est::GaussianMl>());
  EXPECT_EQ(EstimatorSlot::StorageSize(*spec, EstimatorKind::kMap),
            Impl::StorageSizeOf<est::NormalGamma>());
  // The block is the header, the name and exactly these slots (up to alignment padding).
  std::size_t slots = sizeof(DetectorSlot);
  for (EstimatorKind k : spec->estimators) slots += EstimatorSlot::StorageSize(*spec, k);
  EXPECT_GE(ch->block_bytes(), sizeof(Channel) + name.size() + slots);
  EXPECT_LE(ch->block_bytes(),
            sizeof(Channel) + name.size() + slots + 2 * alignof(std::max_align_t));
  // Smaller than a std::variant of all estimators per slot would make it.
  EXPECT_LT(ch->block_bytes(), sizeof(Channel) + name.size() + sizeof(DetectorSlot) +
                                   3 * sizeof(EstimatorSlot::Backup));
}

TEST(ChannelTest, EstimatorSlotsAreIndependentAndRestoreFromABackup) {
  const auto spec = SpecOf(Model::kGaussian, 0);
  ChannelPtr ch = Channel::Create(spec, "a");
  est::Sample s;
  s.time = 1.0;
  for (int i = 0; i < 5; ++i) {
    s.y = 1.0 + 0.25 * i;
    for (std::size_t e = 0; e < ch->estimator_count(); ++e) {
      ASSERT_TRUE(ch->estimator(e).Update(s, nullptr, nullptr).ok());
    }
  }
  std::vector<std::vector<double>> before(3);
  std::vector<EstimatorSlot::Backup> backup(3);
  for (std::size_t e = 0; e < 3; ++e) {
    ch->estimator(e).Pack(&before[e]);
    ch->estimator(e).SaveTo(&backup[e]);
  }
  s.y = 100.0;
  for (std::size_t e = 0; e < 3; ++e)
    ASSERT_TRUE(ch->estimator(e).Update(s, nullptr, nullptr).ok());
  for (std::size_t e = 0; e < 3; ++e) {
    std::vector<double> changed;
    ch->estimator(e).Pack(&changed);
    EXPECT_NE(changed, before[e]) << e;
    ch->estimator(e).RestoreFrom(backup[e]);
    std::vector<double> restored;
    ch->estimator(e).Pack(&restored);
    EXPECT_EQ(restored, before[e]) << e;
  }
  EXPECT_NEAR(ch->estimator(1).Report(0.95).value.at(0), 1.5, 1e-12);  // ml mean of 1, 1.25, ..., 2
}

TEST(ChannelTest, RegressionChannelBoxesItsEstimators) {
  const auto spec = SpecOf(Model::kLinear, 2);
  ChannelPtr ch = Channel::Create(spec, "cal/probe");
  ASSERT_EQ(ch->estimator_count(), 3u);
  for (std::size_t e = 0; e < 3; ++e) {
    EXPECT_EQ(EstimatorSlot::StorageSize(*spec, spec->estimators[e]),
              EstimatorSlot::Impl::kHeaderBytes + sizeof(void*));
    EXPECT_TRUE(ch->estimator(e).CanPredict());
  }
  est::Sample s;
  const double x[] = {1.0, 2.0, 3.0};
  s.x = x;
  s.y = 4.0;
  s.time = 1.0;
  EXPECT_TRUE(ch->estimator(0).Update(s, nullptr, nullptr).ok());
  EXPECT_EQ(ch->name(), "cal/probe");
}

}  // namespace
}  // namespace bayline::pipeline
