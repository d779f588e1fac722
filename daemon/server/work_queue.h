// A bounded multi-producer queue with blocking waits: how the ingest and supervisor threads hand
// work to a worker thread. Two lanes:
//   * ordered: Push blocks while the lane holds `capacity` items, or while adding the item's
//     `bytes` would take the lane over `byte_capacity` (an empty lane always takes one item, so a
//     large item cannot wait forever). Backpressure so reaches the PULL socket and the producers,
//     and the bytes held are at most byte_capacity + one item.
//   * urgent: PushUrgent never blocks (control requests: few, small, one at a time per caller).
// Pop blocks while both lanes are empty and returns an urgent item first, else the oldest ordered
// one. Nothing spins.
//
// Thread safety: every method may be called from any thread.
#pragma once

#include <algorithm>
#include <condition_variable>
#include <cstddef>
#include <cstdint>
#include <deque>
#include <mutex>
#include <optional>

namespace bayline::server {

template <typename T>
class WorkQueue {
 public:
  explicit WorkQueue(size_t capacity, uint64_t byte_capacity = UINT64_MAX)
      : capacity_(capacity == 0 ? 1 : capacity), byte_capacity_(byte_capacity) {}

  // Blocks until the ordered lane has room, then appends.
  void Push(T item, uint64_t bytes = 0) {
    std::unique_lock lock(mutex_);
    not_full_.wait(lock, [&] {
      return items_.empty() || (items_.size() < capacity_ &&
                                bytes <= byte_capacity_ - std::min(bytes_, byte_capacity_));
    });
    items_.push_back({std::move(item), bytes});
    bytes_ += bytes;
    lock.unlock();
    not_empty_.notify_one();
  }

  // Appends to the urgent lane; never blocks.
  void PushUrgent(T item) {
    {
      std::lock_guard lock(mutex_);
      urgent_.push_back(std::move(item));
    }
    not_empty_.notify_one();
  }

  // Blocks until an item is available, then removes and returns an urgent one, else the oldest.
  T Pop() {
    std::unique_lock lock(mutex_);
    not_empty_.wait(lock, [&] { return !items_.empty() || !urgent_.empty(); });
    return TakeLocked(lock);
  }

  // The same without blocking: nullopt when both lanes are empty.
  std::optional<T> TryPop() {
    std::unique_lock lock(mutex_);
    if (items_.empty() && urgent_.empty()) return std::nullopt;
    return TakeLocked(lock);
  }

  // Items in both lanes.
  size_t size() const {
    std::lock_guard lock(mutex_);
    return items_.size() + urgent_.size();
  }
  // Bytes of the ordered lane's items.
  uint64_t bytes() const {
    std::lock_guard lock(mutex_);
    return bytes_;
  }

 private:
  struct Entry {
    T item;
    uint64_t bytes;
  };

  T TakeLocked(std::unique_lock<std::mutex>& lock) {
    if (!urgent_.empty()) {
      T item = std::move(urgent_.front());
      urgent_.pop_front();
      return item;
    }
    Entry entry = std::move(items_.front());
    items_.pop_front();
    bytes_ -= entry.bytes;
    lock.unlock();
    not_full_.notify_all();  // waiters may need different room
    return std::move(entry.item);
  }

  const size_t capacity_;
  const uint64_t byte_capacity_;
  mutable std::mutex mutex_;
  std::condition_variable not_full_;
  std::condition_variable not_empty_;
  std::deque<Entry> items_;
  std::deque<T> urgent_;
  uint64_t bytes_ = 0;
};

}  // namespace bayline::server
