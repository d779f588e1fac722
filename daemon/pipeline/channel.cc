#include "daemon/pipeline/channel.h"

#include <cstring>
#include <limits>
#include <new>
#include <stdexcept>

#include "daemon/pipeline/channel_name.h"

namespace bayline::pipeline {
namespace {

constexpr std::size_t kBlockAlignment = alignof(std::max_align_t);
static_assert(alignof(Channel) <= kBlockAlignment && EstimatorSlot::kAlignment <= kBlockAlignment &&
                  alignof(DetectorSlot) <= kBlockAlignment,
              "operator new must align every part of the block");

constexpr std::size_t RoundUp(std::size_t n, std::size_t a) { return (n + a - 1) / a * a; }

}  // namespace

ChannelPtr Channel::Create(std::shared_ptr<const ResolvedSpec> spec, std::string_view name) {
  const ResolvedSpec& s = *spec;
  const std::size_t n_est = s.estimators.size();
  const std::size_t n_det = s.detectors.size();
  if (n_est > kMaxEstimatorsPerChannel)
    throw std::length_error("too many estimators for a channel");

  // Layout (see channel.h): header, name, estimators, detectors.
  std::array<uint32_t, kMaxEstimatorsPerChannel> est_offset{};
  std::size_t at = RoundUp(sizeof(Channel) + name.size(), EstimatorSlot::kAlignment);
  for (std::size_t i = 0; i < n_est; ++i) {
    est_offset[i] = static_cast<uint32_t>(at);
    at += EstimatorSlot::StorageSize(s, s.estimators[i]);
  }
  at = RoundUp(at, alignof(DetectorSlot));
  const std::size_t det_offset = at;
  at += n_det * sizeof(DetectorSlot);
  const std::size_t total = RoundUp(at, kBlockAlignment);
  if (total > std::numeric_limits<uint32_t>::max())
    throw std::length_error("channel block too large");

  void* block = ::operator new(total);
  auto* ch = ::new (block) Channel(std::move(spec));
  ch->block_bytes_ = static_cast<uint32_t>(total);
  ch->name_size_ = static_cast<uint32_t>(name.size());
  ch->detectors_offset_ = static_cast<uint32_t>(det_offset);
  ch->estimator_offset_ = est_offset;
  if (!name.empty()) std::memcpy(ch->base() + sizeof(Channel), name.data(), name.size());
  ChannelPtr owner(ch);  // from here on the deleter destroys the slots counted so far
  for (std::size_t i = 0; i < n_est; ++i) {
    EstimatorSlot::Create(ch->base() + est_offset[i], s, s.estimators[i]);
    ch->estimator_count_ = static_cast<uint8_t>(i + 1);
  }
  auto* detectors = reinterpret_cast<DetectorSlot*>(ch->base() + det_offset);
  const uint64_t score_seed = ChannelHash(name);  // the same randomization for every detector
  for (std::size_t d = 0; d < n_det; ++d) {
    const DetectorSetup& setup = s.detectors[d];
    ::new (static_cast<void*>(detectors + d)) DetectorSlot(
        setup, s.model, s.estimators[static_cast<std::size_t>(setup.watch)], score_seed);
    ch->detector_count_ = static_cast<uint32_t>(d + 1);
  }
  return owner;
}

void ChannelDeleter::operator()(Channel* channel) const {
  if (channel == nullptr) return;
  channel->DestroySlots(channel->estimator_count_, channel->detector_count_);
  channel->~Channel();
  ::operator delete(static_cast<void*>(channel));
}

void Channel::DestroySlots(std::size_t estimators, std::size_t detectors) {
  std::span<DetectorSlot> dets = this->detectors();
  for (std::size_t d = 0; d < detectors; ++d) dets[d].~DetectorSlot();
  for (std::size_t i = 0; i < estimators; ++i) estimator(i).Destroy();
}

bool Channel::alarm_active() const {
  for (const auto& d : detectors()) {
    if (d.alarm_active()) return true;
  }
  return false;
}

}  // namespace bayline::pipeline
