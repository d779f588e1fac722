// Pipeline::ProcessBatch publishes exactly what Process would for each observation in order: the
// lookahead (hashing and prefetching later observations) must not change anything, including
// when an observation of the batch creates the channel a later one uses, or is refused.
#include <gtest/gtest.h>

#include <string>
#include <vector>

#include "tests/unit/daemon/pipeline/test_util.h"

namespace bayline::pipeline {
namespace {

using testing::Obs;
using testing::RecordingSink;
using testing::SnapshotBytes;

std::vector<std::string> Published(const RecordingSink& sink) {
  std::vector<std::string> out;
  for (const auto& r : sink.records)
    out.push_back(r.topic + " " + r.publication.SerializeAsString());
  return out;
}

TEST(BatchTest, ProcessBatchPublishesWhatProcessWouldInOrder) {
  bayline::v1::ObservationBatch batch;
  std::vector<int64_t> arrival;
  auto add = [&](const bayline::v1::Observation& o) {
    *batch.add_observations() = o;
    arrival.push_back(testing::kArrival + static_cast<int64_t>(arrival.size()));
  };
  for (uint64_t i = 1; i <= 30; ++i) {
    add(Obs("site/a", i, 1.0 + 0.1 * double(i % 4)));  // created by the first
    add(Obs("site/probe" + std::to_string(i % 5), i / 5 + 1, 2.0 + double(i % 3)));
    if (i % 7 == 0) add(Obs("site/a", i, 1.0));                          // duplicate
    if (i % 9 == 0) add(Obs("", i, 1.0));                                // empty name
    if (i % 11 == 0) add(Obs(std::string(300, 'z'), i, 1.0));            // too long: not hashed
    if (i % 13 == 0) add(Obs("bad\xFF", i, 1.0));                        // invalid UTF-8
    if (i % 6 == 0) add(Obs("cal/p", i, 3.0 + double(i), {double(i)}));  // linear channel
  }
  auto o = Obs("site/a", 99, 1.0);
  o.clear_y();
  add(o);  // no y and no x: refused

  Pipeline one_by_one(DefaultConfig()), batched(DefaultConfig());
  RecordingSink s1, s2;
  for (int i = 0; i < batch.observations_size(); ++i) {
    one_by_one.Process(batch.observations(i), arrival[static_cast<std::size_t>(i)], s1);
  }
  batched.ProcessBatch(batch.observations(), arrival, s2);
  EXPECT_GT(s1.records.size(), 100u);
  EXPECT_EQ(Published(s2), Published(s1));
  EXPECT_EQ(SnapshotBytes(batched), SnapshotBytes(one_by_one));
  EXPECT_EQ(batched.counters().rejected_total, one_by_one.counters().rejected_total);
  EXPECT_EQ(batched.counters().seq_duplicates, one_by_one.counters().seq_duplicates);
  EXPECT_GT(batched.counters().rejected_total, 5u);
}

TEST(BatchTest, CallerHashedBatchPublishesWhatProcessWould) {
  bayline::v1::ObservationBatch batch;
  std::vector<int64_t> arrival;
  std::vector<uint64_t> hashes;
  for (uint64_t i = 1; i <= 40; ++i) {
    const std::string name = i % 10 == 0 ? std::string(300, 'z')  // too long: hash unused
                                         : "site/p" + std::to_string(i % 6);
    *batch.add_observations() = Obs(name, i / 6 + 1, 1.0 + 0.5 * double(i % 3));
    arrival.push_back(testing::kArrival + static_cast<int64_t>(i));
    hashes.push_back(ChannelHash(name));
  }
  Pipeline one_by_one(DefaultConfig()), hashed(DefaultConfig());
  RecordingSink s1, s2;
  for (int i = 0; i < batch.observations_size(); ++i) {
    one_by_one.Process(batch.observations(i), arrival[static_cast<std::size_t>(i)], s1);
  }
  hashed.ProcessBatch(batch.observations(), arrival, hashes, s2);
  EXPECT_GT(s1.records.size(), 40u);
  EXPECT_EQ(Published(s2), Published(s1));
  EXPECT_EQ(SnapshotBytes(hashed), SnapshotBytes(one_by_one));

  // One hash short: refused before anything is processed.
  Pipeline refused(DefaultConfig());
  RecordingSink s3;
  hashes.pop_back();
  EXPECT_THROW(refused.ProcessBatch(batch.observations(), arrival, hashes, s3),
               std::invalid_argument);
  EXPECT_TRUE(s3.records.empty());
  EXPECT_EQ(refused.counters().channels, 0u);
}

TEST(BatchTest, MismatchedArrivalTimesAreRefusedAndChangeNothing) {
  bayline::v1::ObservationBatch batch;
  *batch.add_observations() = Obs("site/a", 1, 1.0);
  *batch.add_observations() = Obs("site/b", 1, 1.0);
  Pipeline p(DefaultConfig());
  RecordingSink sink;
  const std::vector<int64_t> one_time = {testing::kArrival};
  EXPECT_THROW(p.ProcessBatch(batch.observations(), one_time, sink), std::invalid_argument);
  EXPECT_TRUE(sink.records.empty());
  EXPECT_EQ(p.counters().channels, 0u);
  p.ProcessBatch(batch.observations(), std::vector<int64_t>(2, testing::kArrival), sink);
  EXPECT_EQ(p.counters().channels, 2u);
}

}  // namespace
}  // namespace bayline::pipeline
