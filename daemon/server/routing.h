// Which daemon (shard) and which worker own a channel. Shards and workers both partition by the
// channel hash; the worker index divides by the shard count first, so with --shard i/2 and two
// workers the channels of shard i still spread over both workers.
#pragma once

#include <cstddef>
#include <cstdint>

#include "daemon/server/daemon_options.h"

namespace bayline::server {

inline bool InShard(uint64_t channel_hash, const Shard& shard) {
  return channel_hash % shard.count == shard.index;
}

inline size_t WorkerOf(uint64_t channel_hash, const Shard& shard, size_t workers) {
  return size_t((channel_hash / shard.count) % workers);
}

}  // namespace bayline::server
