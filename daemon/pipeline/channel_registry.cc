#include "daemon/pipeline/channel_registry.h"

#include <bit>
#include <utility>

namespace bayline::pipeline {

ChannelRegistry::~ChannelRegistry() { Clear(); }

std::size_t ChannelRegistry::Locate(std::string_view name, uint64_t hash) const {
  std::size_t i = Home(hash);
  for (;;) {
    const Slot& s = slots_[i];
    if (s.channel == nullptr || (s.hash == hash && s.channel->name() == name)) return i;
    i = (i + 1) & mask_;
  }
}

Channel* ChannelRegistry::Find(std::string_view name, uint64_t hash) const {
  if (size_ == 0) return nullptr;
  return slots_[Locate(name, hash)].channel;
}

void ChannelRegistry::PrefetchChannel(uint64_t hash) const {
  if (size_ == 0) return;
  std::size_t i = Home(hash);
  for (int probes = 0; probes < 4 && slots_[i].channel != nullptr; ++probes, i = (i + 1) & mask_) {
    if (slots_[i].hash == hash) {
      Channel::PrefetchHead(slots_[i].channel);
      return;
    }
  }
}

Channel* ChannelRegistry::InsertOrReplace(ChannelPtr channel) {
  const uint64_t hash = ChannelHash(channel->name());
  if (slots_ == nullptr || (size_ + 1) * 4 > (mask_ + 1) * 3) Grow();
  Slot& s = slots_[Locate(channel->name(), hash)];
  if (s.channel != nullptr) {
    ChannelPtr old(s.channel);  // destroyed on return
    s.channel = channel.release();
    return s.channel;
  }
  s.hash = hash;
  s.channel = channel.release();
  ++size_;
  return s.channel;
}

bool ChannelRegistry::Erase(std::string_view name, uint64_t hash) {
  if (size_ == 0) return false;
  std::size_t hole = Locate(name, hash);
  if (slots_[hole].channel == nullptr) return false;
  ChannelPtr doomed(slots_[hole].channel);
  slots_[hole] = Slot{};
  --size_;
  // Backward shift: move later entries of the run into the hole when their home does not lie
  // cyclically in (hole, i], so every entry stays reachable from its home without gaps.
  for (std::size_t i = (hole + 1) & mask_; slots_[i].channel != nullptr; i = (i + 1) & mask_) {
    const std::size_t home = Home(slots_[i].hash);
    const bool home_in_between = ((i - home) & mask_) < ((i - hole) & mask_);
    if (home_in_between) continue;
    slots_[hole] = slots_[i];
    slots_[i] = Slot{};
    hole = i;
  }
  return true;
}

void ChannelRegistry::Clear() {
  if (slots_ != nullptr) {
    for (std::size_t i = 0; i <= mask_; ++i) ChannelDeleter()(slots_[i].channel);
  }
  slots_.reset();
  mask_ = 0;
  shift_ = 63;
  size_ = 0;
}

void ChannelRegistry::Grow() { Rehash(slots_ == nullptr ? kMinCapacity : 2 * (mask_ + 1)); }

void ChannelRegistry::Rehash(std::size_t capacity) {
  std::unique_ptr<Slot[]> old = std::move(slots_);
  const std::size_t old_capacity = old ? mask_ + 1 : 0;
  slots_ = std::make_unique<Slot[]>(capacity);
  mask_ = capacity - 1;
  shift_ = 64 - static_cast<unsigned>(std::countr_zero(capacity));
  for (std::size_t j = 0; j < old_capacity; ++j) {
    if (old[j].channel == nullptr) continue;
    std::size_t i = Home(old[j].hash);
    while (slots_[i].channel != nullptr) i = (i + 1) & mask_;
    slots_[i] = old[j];
  }
}

}  // namespace bayline::pipeline
