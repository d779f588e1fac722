#include "daemon/server/work_queue.h"

#include <gtest/gtest.h>

#include <thread>

namespace bayline::server {
namespace {

TEST(WorkQueueTest, UrgentItemsComeOutFirstAndOrderedOnesInOrder) {
  WorkQueue<int> queue(8);
  queue.Push(1);
  queue.Push(2);
  queue.PushUrgent(10);
  queue.Push(3);
  queue.PushUrgent(11);
  EXPECT_EQ(queue.size(), 5u);
  EXPECT_EQ(queue.Pop(), 10);
  EXPECT_EQ(queue.Pop(), 11);
  EXPECT_EQ(queue.Pop(), 1);
  EXPECT_EQ(queue.Pop(), 2);
  EXPECT_EQ(queue.Pop(), 3);
  EXPECT_FALSE(queue.TryPop().has_value());
}

TEST(WorkQueueTest, UrgentPushesDoNotWaitForAFullQueue) {
  WorkQueue<int> queue(1);
  queue.Push(1);
  queue.PushUrgent(2);  // the ordered lane is full; this must not block
  queue.PushUrgent(3);
  EXPECT_EQ(queue.size(), 3u);
}

TEST(WorkQueueTest, BytesBoundTheOrderedLaneButAnEmptyLaneTakesOneItem) {
  WorkQueue<int> queue(100, 1000);
  queue.Push(1, 5000);  // larger than the bound: taken because the lane is empty
  EXPECT_EQ(queue.bytes(), 5000u);
  // The next push must wait until the large item is taken out.
  std::thread producer([&] { queue.Push(2, 600); });
  EXPECT_EQ(queue.Pop(), 1);
  producer.join();
  EXPECT_EQ(queue.bytes(), 600u);
  // 600 + 400 fits exactly; a further byte would not, until something is taken.
  queue.Push(3, 400);
  EXPECT_EQ(queue.bytes(), 1000u);
  std::thread blocked([&] { queue.Push(4, 1); });
  EXPECT_EQ(queue.Pop(), 2);
  blocked.join();
  EXPECT_EQ(queue.bytes(), 401u);
  EXPECT_EQ(queue.Pop(), 3);
  EXPECT_EQ(queue.Pop(), 4);
  EXPECT_EQ(queue.bytes(), 0u);
}

}  // namespace
}  // namespace bayline::server
