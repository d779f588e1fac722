// Channel ownership: shards partition by hash, and workers stay balanced inside every shard.
#include "daemon/server/routing.h"

#include <gtest/gtest.h>

#include <random>
#include <vector>

namespace bayline::server {
namespace {

TEST(RoutingTest, EveryChannelHasExactlyOneShard) {
  std::mt19937_64 rng(3);
  for (int i = 0; i < 1000; ++i) {
    const uint64_t h = rng();
    int owners = 0;
    for (uint32_t s = 0; s < 3; ++s) owners += InShard(h, Shard{s, 3}) ? 1 : 0;
    EXPECT_EQ(owners, 1);
  }
}

TEST(RoutingTest, WorkersOfOneShardAreBalancedWhenCountsShareFactors) {
  // With hash % workers the two workers of shard 0/2 would see only even hashes -> one worker.
  std::mt19937_64 rng(4);
  for (uint32_t shard_count : {1u, 2u, 4u}) {
    for (size_t workers : {size_t(2), size_t(4)}) {
      std::vector<int> load(workers, 0);
      int in_shard = 0;
      for (int i = 0; i < 40000; ++i) {
        const uint64_t h = rng();
        if (!InShard(h, Shard{0, shard_count})) continue;
        ++in_shard;
        ++load[WorkerOf(h, Shard{0, shard_count}, workers)];
      }
      for (int l : load) {
        EXPECT_NEAR(double(l) / in_shard, 1.0 / double(workers), 0.03)
            << shard_count << " shards, " << workers << " workers";
      }
    }
  }
}

}  // namespace
}  // namespace bayline::server
