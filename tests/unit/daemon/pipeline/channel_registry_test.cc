// ChannelRegistry (daemon/pipeline/channel_registry.h): open addressing keyed by ChannelHash, with
// channels that keep their address. Checked against a std::map oracle under many names, random
// insertions and erasures, growth, replacement and clearing.
#include "daemon/pipeline/channel_registry.h"

#include <gtest/gtest.h>

#include <map>
#include <memory>
#include <random>
#include <string>
#include <vector>

#include "daemon/pipeline/daemon_config.h"
#include "daemon/pipeline/rule_set.h"

namespace bayline::pipeline {
namespace {

// The default rule's gaussian spec: real estimators and a CUSUM in every channel.
std::shared_ptr<const ResolvedSpec> GaussianSpec() {
  static const std::shared_ptr<const ResolvedSpec> spec = [] {
    RuleSet rules;
    EXPECT_TRUE(rules.Build(DefaultConfig()).ok());
    std::shared_ptr<const ResolvedSpec> s;
    EXPECT_TRUE(rules.Resolve(0, Model::kGaussian, 0, &s).ok());
    return s;
  }();
  return spec;
}

// Names of varied length and shape, some sharing long prefixes (so that a hash match is not
// mistaken for a name match), one multi-byte.
// (Built by appending: GCC 12 warns falsely, -Wrestrict, on a literal + a temporary string.)
std::string NameOf(int i) {
  std::string name;
  switch (i % 4) {
    case 0:
      name = "s";
      break;
    case 1:
      name = "coldstore/site" + std::to_string(i % 7);
      name += "/probe";
      break;
    case 2:
      name = std::string(100, 'x');
      break;
    default:
      name = "k\xC3\xBChlhaus/";
      break;
  }
  name += std::to_string(i);
  return name;
}

ChannelPtr Make(const std::string& name, uint64_t accepted = 0) {
  ChannelPtr ch = Channel::Create(GaussianSpec(), name);
  ch->accepted = accepted;
  return ch;
}

TEST(ChannelRegistryTest, EmptyRegistryFindsAndErasesNothing) {
  ChannelRegistry r;
  EXPECT_EQ(r.size(), 0u);
  EXPECT_TRUE(r.empty());
  EXPECT_EQ(r.capacity(), 0u);
  EXPECT_EQ(r.Find("a"), nullptr);
  EXPECT_FALSE(r.Erase("a"));
  int visited = 0;
  r.ForEach([&](const Channel&) { ++visited; });
  EXPECT_EQ(visited, 0);
}

TEST(ChannelRegistryTest, PrefetchHintsOfAnyHashAreSafeAndChangeNothing) {
  // The hints read the slot array without a name comparison: they must cope with an empty
  // registry, hashes of absent names and extreme values, and leave every lookup as it was.
  const std::vector<uint64_t> hashes = {0, ~uint64_t{0}, ChannelHash("s1"), ChannelHash("absent")};
  ChannelRegistry r;
  for (uint64_t h : hashes) {
    r.PrefetchSlot(h);
    r.PrefetchChannel(h);
  }
  std::vector<Channel*> address;
  for (int i = 0; i < 40; ++i) address.push_back(r.InsertOrReplace(Make(NameOf(i))));
  for (uint64_t h : hashes) {
    r.PrefetchSlot(h);
    r.PrefetchChannel(h);
  }
  for (int i = 0; i < 40; ++i) r.PrefetchChannel(ChannelHash(NameOf(i)));
  EXPECT_EQ(r.size(), 40u);
  for (int i = 0; i < 40; ++i) EXPECT_EQ(r.Find(NameOf(i)), address[static_cast<std::size_t>(i)]);
  EXPECT_EQ(r.Find("absent"), nullptr);
}

TEST(ChannelRegistryTest, FindsEveryNameAndKeepsAddressesThroughGrowth) {
  ChannelRegistry r;
  constexpr int kN = 20000;
  std::vector<Channel*> address(kN);
  for (int i = 0; i < kN; ++i) {
    address[static_cast<std::size_t>(i)] =
        r.InsertOrReplace(Make(NameOf(i), static_cast<uint64_t>(i)));
    ASSERT_EQ(r.size(), static_cast<std::size_t>(i + 1));
  }
  EXPECT_GE(r.capacity() * 3, r.size() * 4);  // at most 3/4 full
  for (int i = 0; i < kN; ++i) {
    const std::string name = NameOf(i);
    Channel* found = r.Find(name, ChannelHash(name));
    ASSERT_EQ(found, address[static_cast<std::size_t>(i)]) << name;  // never moved by rehashing
    EXPECT_EQ(found->name(), name);
    EXPECT_EQ(found->accepted, static_cast<uint64_t>(i));
  }
  EXPECT_EQ(r.Find(NameOf(4 * kN)), nullptr);
  EXPECT_EQ(r.Find(std::string(100, 'x')), nullptr);  // a prefix of registered names
  std::map<std::string, int> seen;
  r.ForEach([&](const Channel& ch) { ++seen[std::string(ch.name())]; });
  EXPECT_EQ(seen.size(), static_cast<std::size_t>(kN));
  for (const auto& [name, count] : seen) EXPECT_EQ(count, 1) << name;
}

TEST(ChannelRegistryTest, RandomInsertEraseMatchesAMapOracle) {
  // Small name pool and many operations: long probe runs in a small table, so erasure's backward
  // shift is exercised at every position of a run, including runs that wrap around the end.
  std::mt19937_64 rng(20261202);
  ChannelRegistry r;
  std::map<std::string, Channel*> oracle;
  std::uniform_int_distribution<int> pick(0, 299);
  std::uniform_int_distribution<int> op(0, 9);
  for (int step = 0; step < 60000; ++step) {
    const std::string name = NameOf(pick(rng));
    const int o = op(rng);
    if (o < 5) {
      Channel* ch = r.InsertOrReplace(Make(name, static_cast<uint64_t>(step)));
      oracle[name] = ch;
    } else if (o < 9) {
      EXPECT_EQ(r.Erase(name, ChannelHash(name)), oracle.erase(name) == 1) << name;
    } else {
      Channel* found = r.Find(name);
      auto it = oracle.find(name);
      ASSERT_EQ(found, it == oracle.end() ? nullptr : it->second) << name;
    }
    ASSERT_EQ(r.size(), oracle.size());
    if (step % 5000 == 0) {
      for (const auto& [n, ch] : oracle) ASSERT_EQ(r.Find(n), ch) << n;
    }
  }
  for (const auto& [n, ch] : oracle) ASSERT_EQ(r.Find(n), ch) << n;
  for (int i = 0; i < 300; ++i) {
    const std::string name = NameOf(i);
    if (oracle.count(name) == 0) {
      EXPECT_EQ(r.Find(name), nullptr) << name;
    }
  }
}

TEST(ChannelRegistryTest, ErasedNamesCanComeBackAndOthersStayPut) {
  ChannelRegistry r;
  std::vector<Channel*> address;
  for (int i = 0; i < 1000; ++i) address.push_back(r.InsertOrReplace(Make(NameOf(i))));
  for (int i = 0; i < 1000; i += 2) ASSERT_TRUE(r.Erase(NameOf(i)));
  for (int i = 0; i < 1000; i += 2) EXPECT_FALSE(r.Erase(NameOf(i)));
  EXPECT_EQ(r.size(), 500u);
  for (int i = 1; i < 1000; i += 2)
    EXPECT_EQ(r.Find(NameOf(i)), address[static_cast<std::size_t>(i)]);
  for (int i = 0; i < 1000; i += 2) {
    EXPECT_EQ(r.Find(NameOf(i)), nullptr);
    r.InsertOrReplace(Make(NameOf(i), 7));
  }
  EXPECT_EQ(r.size(), 1000u);
  for (int i = 0; i < 1000; i += 2) EXPECT_EQ(r.Find(NameOf(i))->accepted, 7u);
}

TEST(ChannelRegistryTest, ReplaceDestroysTheOldChannelAndClearDestroysAll) {
  const auto spec = GaussianSpec();  // every channel holds a reference: use_count counts them
  const long base = spec.use_count();
  {
    ChannelRegistry r;
    r.InsertOrReplace(Make("a", 1));
    r.InsertOrReplace(Make("b", 2));
    EXPECT_EQ(spec.use_count(), base + 2);
    Channel* replaced = r.InsertOrReplace(Make("a", 3));
    EXPECT_EQ(r.size(), 2u);
    EXPECT_EQ(spec.use_count(), base + 2);  // the first "a" is gone
    EXPECT_EQ(r.Find("a"), replaced);
    EXPECT_EQ(replaced->accepted, 3u);
    r.Clear();
    EXPECT_EQ(r.size(), 0u);
    EXPECT_EQ(r.Find("b"), nullptr);
    EXPECT_EQ(spec.use_count(), base);
    r.InsertOrReplace(Make("c"));  // usable after Clear
    EXPECT_NE(r.Find("c"), nullptr);
    EXPECT_EQ(spec.use_count(), base + 1);
  }
  EXPECT_EQ(spec.use_count(), base);  // the destructor destroys what is left
}

}  // namespace
}  // namespace bayline::pipeline
