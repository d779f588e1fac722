// ChannelRegistry: the channels of one pipeline, by name.
//
// Open addressing with linear probing over a power-of-two array of 16-byte slots {hash, Channel*}
// (an empty slot has no channel), at most 3/4 full. The hash is ChannelHash(name), the same FNV-1a
// hash the daemon routes channels by (daemon/server/routing.h), so the hash computed once per
// observation to route it also finds its channel (Pipeline::ProcessBatch). A slot's home is the top
// bits of hash * 2^64/phi (Fibonacci hashing, which spreads every bit of the hash). A lookup
// compares the full 64-bit hash before the name, so it touches a channel's block only on a hash
// match. Erase shifts later entries of the run back (no tombstones), so lookups never slow down
// after many erasures.
//
// The registry owns the channels (Channel::Create blocks). A channel's address never changes while
// it is registered: growing the array moves slots, not channels.
//
// Iteration (ForEach) is in array order, not sorted. Not thread-safe.
#pragma once

#include <cstddef>
#include <cstdint>
#include <memory>
#include <string_view>

#include "daemon/pipeline/channel.h"
#include "daemon/pipeline/channel_name.h"

namespace bayline::pipeline {

class ChannelRegistry {
 public:
  ChannelRegistry() = default;
  ~ChannelRegistry();
  ChannelRegistry(const ChannelRegistry&) = delete;
  ChannelRegistry& operator=(const ChannelRegistry&) = delete;

  std::size_t size() const { return size_; }
  bool empty() const { return size_ == 0; }
  std::size_t capacity() const { return slots_ ? mask_ + 1 : 0; }

  // The channel named `name`, or nullptr. `hash` must be ChannelHash(name).
  Channel* Find(std::string_view name, uint64_t hash) const;
  Channel* Find(std::string_view name) const { return Find(name, ChannelHash(name)); }

  // Prefetch hints for a lookup that will follow soon (no effect on behaviour). PrefetchSlot starts
  // loading the home slot of `hash`; PrefetchChannel, best called once that slot has had time to
  // arrive, starts loading the head of the block of a channel whose slot holds `hash` (names are
  // not compared: that would wait for the block).
  void PrefetchSlot(uint64_t hash) const {
    if (slots_ != nullptr) __builtin_prefetch(&slots_[Home(hash)]);
  }
  void PrefetchChannel(uint64_t hash) const;

  // Registers `channel`, replacing (destroying) a channel of the same name if there is one, and
  // returns it. Its hash is computed from its name.
  Channel* InsertOrReplace(ChannelPtr channel);

  // Destroys the channel named `name`; false when there is none. `hash` as for Find.
  bool Erase(std::string_view name, uint64_t hash);
  bool Erase(std::string_view name) { return Erase(name, ChannelHash(name)); }

  // Destroys every channel and releases the slot array.
  void Clear();

  // f(Channel&) / f(const Channel&) for every channel, in array order. f must not insert or erase.
  template <typename F>
  void ForEach(F&& f) {
    for (std::size_t i = 0; slots_ != nullptr && i <= mask_; ++i) {
      if (slots_[i].channel != nullptr) f(*slots_[i].channel);
    }
  }
  template <typename F>
  void ForEach(F&& f) const {
    for (std::size_t i = 0; slots_ != nullptr && i <= mask_; ++i) {
      if (slots_[i].channel != nullptr) f(static_cast<const Channel&>(*slots_[i].channel));
    }
  }

 private:
  struct Slot {
    uint64_t hash = 0;
    Channel* channel = nullptr;  // owned; nullptr: empty
  };
  static constexpr std::size_t kMinCapacity = 16;

  std::size_t Home(uint64_t hash) const { return (hash * 0x9E3779B97F4A7C15ull) >> shift_; }
  // Index of the slot holding `name`, or of the empty slot ending its probe run.
  std::size_t Locate(std::string_view name, uint64_t hash) const;
  void Grow();
  void Rehash(std::size_t capacity);

  std::unique_ptr<Slot[]> slots_;
  std::size_t mask_ = 0;  // capacity - 1
  unsigned shift_ = 63;   // 64 - log2(capacity)
  std::size_t size_ = 0;
};

}  // namespace bayline::pipeline
