// The worker queue's claim: one holder at a time, and a producer may only take it when nothing is
// queued, so work done in place of the consumer never overtakes queued work.
#include "daemon/server/work_queue.h"

#include <gtest/gtest.h>

#include <future>
#include <thread>
#include <vector>

namespace bayline::server {
namespace {

TEST(WorkQueueTest, AProducerClaimsOnlyAnIdleQueue) {
  WorkQueue<int> queue(4);
  EXPECT_TRUE(queue.TryClaimIdle());
  EXPECT_FALSE(queue.TryClaimIdle()) << "a second holder";
  queue.Release();
  queue.Push(1);
  EXPECT_FALSE(queue.TryClaimIdle()) << "claimed past queued work";
  EXPECT_EQ(queue.PopAndClaim(), 1);
  EXPECT_FALSE(queue.TryClaimIdle()) << "claimed while the consumer works";
  queue.Release();
  EXPECT_TRUE(queue.TryClaimIdle());
  queue.Release();
}

TEST(WorkQueueTest, TheConsumerWaitsForTheClaimToBeReleased) {
  WorkQueue<int> queue(4);
  ASSERT_TRUE(queue.TryClaimIdle());
  queue.Push(7);  // queued while a producer holds the claim
  std::promise<void> consumer_started;
  auto popped = std::async(std::launch::async, [&] {
    consumer_started.set_value();
    const int item = queue.PopAndClaim();
    queue.Release();
    return item;
  });
  consumer_started.get_future().wait();
  // The consumer cannot take the item while the claim is held: the item is still queued.
  EXPECT_EQ(queue.size(), 1u);
  queue.Release();
  EXPECT_EQ(popped.get(), 7);
  EXPECT_EQ(queue.size(), 0u);
}

TEST(WorkQueueTest, ClaimedWorkFromBothSidesStaysInOrder) {
  // A producer alternates between doing items itself (when it can claim) and queueing them; the
  // consumer records what it pops. Together every item is done exactly once and in order.
  constexpr int kItems = 20000;
  WorkQueue<int> queue(8);
  std::vector<int> done;  // guarded by the claim
  std::thread consumer([&] {
    for (;;) {
      const int item = queue.PopAndClaim();
      if (item >= 0) done.push_back(item);
      queue.Release();
      if (item < 0) break;
    }
  });
  for (int i = 0; i < kItems; ++i) {
    if (i % 3 != 0 && queue.TryClaimIdle()) {
      done.push_back(i);
      queue.Release();
    } else {
      queue.Push(i);
    }
  }
  queue.Push(-1);
  consumer.join();
  ASSERT_EQ(done.size(), size_t(kItems));
  for (int i = 0; i < kItems; ++i) ASSERT_EQ(done[size_t(i)], i);
}

}  // namespace
}  // namespace bayline::server
