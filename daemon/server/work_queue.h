// A bounded multi-producer queue with blocking waits: how the ingest and supervisor threads hand
// work to a worker thread. Push blocks while the queue is full (backpressure reaches the PULL
// socket and so the producers); Pop blocks while it is empty. Nothing spins.
//
// Thread safety: every method may be called from any thread.
#pragma once

#include <condition_variable>
#include <cstddef>
#include <deque>
#include <mutex>
#include <optional>

namespace bayline::server {

template <typename T>
class WorkQueue {
 public:
  explicit WorkQueue(size_t capacity) : capacity_(capacity == 0 ? 1 : capacity) {}

  // Blocks until there is room, then appends.
  void Push(T item) {
    std::unique_lock lock(mutex_);
    not_full_.wait(lock, [&] { return items_.size() < capacity_; });
    items_.push_back(std::move(item));
    lock.unlock();
    not_empty_.notify_one();
  }

  // Blocks until an item is available, then removes and returns the oldest.
  T Pop() {
    std::unique_lock lock(mutex_);
    not_empty_.wait(lock, [&] { return !items_.empty(); });
    T item = std::move(items_.front());
    items_.pop_front();
    lock.unlock();
    not_full_.notify_one();
    return item;
  }

  // Removes and returns the oldest item if there is one; never blocks.
  std::optional<T> TryPop() {
    std::unique_lock lock(mutex_);
    if (items_.empty()) return std::nullopt;
    T item = std::move(items_.front());
    items_.pop_front();
    lock.unlock();
    not_full_.notify_one();
    return item;
  }

  size_t size() const {
    std::lock_guard lock(mutex_);
    return items_.size();
  }

 private:
  const size_t capacity_;
  mutable std::mutex mutex_;
  std::condition_variable not_full_;
  std::condition_variable not_empty_;
  std::deque<T> items_;
};

}  // namespace bayline::server
