// A bounded multi-producer queue with blocking waits: how the ingest and supervisor threads hand
// work to a worker thread. Push blocks while the queue is full (backpressure reaches the PULL
// socket and so the producers); Pop blocks while it is empty. Nothing spins.
//
// The queue also guards who runs the consumer's work. Exactly one thread at a time holds the
// claim: the consumer takes it with each item (PopAndClaim) and gives it back when the item is done
// (Release). A producer that finds the queue empty and unclaimed may take the claim itself
// (TryClaimIdle) and do a small piece of work in place of the consumer, skipping the hand-off and
// the consumer's wake-up: everything queued before has then been done, so order holds. The mutex
// orders each holder's work before the next holder's.
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
    ready_.notify_one();
  }

  // Blocks until an item is available, then removes and returns the oldest.
  T Pop() {
    std::unique_lock lock(mutex_);
    ready_.wait(lock, [&] { return !items_.empty(); });
    return TakeFront(lock);
  }

  // Blocks until an item is available and nobody holds the claim; then takes the claim and
  // removes and returns the oldest item. The caller calls Release() when it is done with it.
  T PopAndClaim() {
    std::unique_lock lock(mutex_);
    ready_.wait(lock, [&] { return !items_.empty() && !claimed_; });
    claimed_ = true;
    return TakeFront(lock);
  }

  // Takes the claim when the queue is empty and unclaimed (never blocks); true if taken.
  bool TryClaimIdle() {
    std::lock_guard lock(mutex_);
    if (!items_.empty() || claimed_) return false;
    claimed_ = true;
    return true;
  }

  // Gives the claim back.
  void Release() {
    std::unique_lock lock(mutex_);
    claimed_ = false;
    const bool waiting_items = !items_.empty();
    lock.unlock();
    if (waiting_items) ready_.notify_one();
  }

  // Removes and returns the oldest item if there is one; never blocks.
  std::optional<T> TryPop() {
    std::unique_lock lock(mutex_);
    if (items_.empty()) return std::nullopt;
    return TakeFront(lock);
  }

  size_t size() const {
    std::lock_guard lock(mutex_);
    return items_.size();
  }

 private:
  T TakeFront(std::unique_lock<std::mutex>& lock) {
    T item = std::move(items_.front());
    items_.pop_front();
    lock.unlock();
    not_full_.notify_one();
    return item;
  }

  const size_t capacity_;
  mutable std::mutex mutex_;
  std::condition_variable not_full_;
  std::condition_variable ready_;
  std::deque<T> items_;
  bool claimed_ = false;
};

}  // namespace bayline::server
