// Channel: everything the pipeline keeps for one channel, in ONE heap block:
//
//   [Channel: spec, sequence window, counters, publish state, layout]
//   [name bytes, padded]
//   [estimator slots in spec->estimators order, each sized for its own estimator]
//   [detector slots in spec->detectors order]
//
// One block per channel means one allocation when a channel is created, a stable address for its
// lifetime (the registry moves only pointers), and few cache lines to touch per observation: the
// name the registry compares sits right after the header, the estimators right after the name.
// A gaussian channel with the default rule and a 28-byte name takes 864 bytes: 120 (header, of
// which 32 the sequence window) + 32 (name) + 208 + 80 + 192 (ls, ml, map: each 8 bytes of kind +
// the estimator) + 232 (the CUSUM slot with its standardizer), rounded to 16; about 905 bytes
// resident per channel with the malloc header and the registry's slots (tests/bench/pipeline
// measures it).
//
// Create builds a channel for a resolved spec; the ChannelPtr destroys it. Not copyable or movable.
#pragma once

#include <array>
#include <cstddef>
#include <cstdint>
#include <memory>
#include <new>
#include <span>
#include <string_view>

#include "daemon/pipeline/detector_slot.h"
#include "daemon/pipeline/estimator_slot.h"
#include "daemon/pipeline/resolved_spec.h"
#include "daemon/pipeline/seq_window.h"

namespace bayline::pipeline {

// Publish policy state: observations since the last estimate publication and its time.
struct PublishState {
  uint64_t since_publish = 0;
  int64_t last_publish_ns = 0;
  bool published = false;
};

class Channel;
struct ChannelDeleter {
  void operator()(Channel* channel) const;
};
using ChannelPtr = std::unique_ptr<Channel, ChannelDeleter>;

class Channel {
 public:
  // A fresh channel named `name` (validated by the caller) with the estimators and detectors of
  // `spec`. Throws std::bad_alloc (or what an estimator's constructor throws); then nothing leaks.
  static ChannelPtr Create(std::shared_ptr<const ResolvedSpec> spec, std::string_view name);

  Channel(const Channel&) = delete;
  Channel& operator=(const Channel&) = delete;

  std::string_view name() const {
    return {reinterpret_cast<const char*>(base() + sizeof(Channel)), name_size_};
  }
  std::size_t estimator_count() const { return estimator_count_; }
  // The estimators in spec->estimators order.
  EstimatorSlot& estimator(std::size_t i) {
    return *std::launder(reinterpret_cast<EstimatorSlot*>(base() + estimator_offset_[i]));
  }
  const EstimatorSlot& estimator(std::size_t i) const {
    return *std::launder(reinterpret_cast<const EstimatorSlot*>(base() + estimator_offset_[i]));
  }
  // The detectors in spec->detectors order.
  std::span<DetectorSlot> detectors() {
    if (detector_count_ == 0) return {};
    return {std::launder(reinterpret_cast<DetectorSlot*>(base() + detectors_offset_)),
            detector_count_};
  }
  std::span<const DetectorSlot> detectors() const {
    if (detector_count_ == 0) return {};
    return {std::launder(reinterpret_cast<const DetectorSlot*>(base() + detectors_offset_)),
            detector_count_};
  }
  bool alarm_active() const;

  // Bytes of the channel's block (the heap node of a Channel; boxed estimators are extra).
  std::size_t block_bytes() const { return block_bytes_; }
  // Prefetch hints (no effect on behaviour). An observation touches nearly all of its channel's
  // block, and with many channels the block is rarely cached; asking for all its cache lines at
  // once lets the loads proceed in parallel instead of one estimator after the other.
  // Prefetch: the whole block, once the header has been read. PrefetchHead: the first
  // kPrefetchHeadBytes (a gaussian channel's whole block) of a channel whose header is not read yet
  // (ChannelRegistry::PrefetchChannel).
  static constexpr std::size_t kPrefetchHeadBytes = 1024;
  static void PrefetchHead(const Channel* ch) {
    const auto* p = reinterpret_cast<const std::byte*>(ch);
    for (std::size_t at = 0; at < kPrefetchHeadBytes; at += 64) __builtin_prefetch(p + at, 1);
  }
  void Prefetch() const {
    for (std::size_t at = 0; at < block_bytes_; at += 64) __builtin_prefetch(base() + at, 1);
  }

  std::shared_ptr<const ResolvedSpec> spec;
  SeqWindow seq;
  uint64_t accepted = 0;
  int64_t last_time_ns = 0;
  PublishState publish;

 private:
  friend struct ChannelDeleter;
  explicit Channel(std::shared_ptr<const ResolvedSpec> resolved) : spec(std::move(resolved)) {}
  ~Channel() = default;
  const std::byte* base() const { return reinterpret_cast<const std::byte*>(this); }
  std::byte* base() { return reinterpret_cast<std::byte*>(this); }
  // Destroys the slots built so far (the first `estimators` estimators and `detectors` detectors).
  void DestroySlots(std::size_t estimators, std::size_t detectors);

  uint32_t block_bytes_ = 0;
  uint32_t name_size_ = 0;
  uint32_t detectors_offset_ = 0;
  uint32_t detector_count_ = 0;
  std::array<uint32_t, kMaxEstimatorsPerChannel> estimator_offset_{};
  uint8_t estimator_count_ = 0;
};

}  // namespace bayline::pipeline
