// Journal segments: round trip, torn tails at every byte, damage, links refused, sync policies.
#include "daemon/server/journal.h"

#include <gtest/gtest.h>
#include <unistd.h>

#include <filesystem>
#include <fstream>
#include <random>

namespace bayline::server {
namespace {

namespace fs = std::filesystem;

class TempDir {
 public:
  TempDir() {
    std::random_device rd;
    path_ = fs::temp_directory_path() /
            ("bayline-journal-test-" + std::to_string(rd()) + std::to_string(rd()));
    fs::create_directories(path_);
  }
  ~TempDir() { fs::remove_all(path_); }
  const fs::path& path() const { return path_; }

 private:
  fs::path path_;
};

struct Record {
  int64_t arrival_ns;
  std::string frame;
  bool operator==(const Record&) const = default;
};

std::vector<Record> ReadAllRecords(const fs::path& path, uint64_t segment,
                                   JournalReadResult* result, bool* ok) {
  std::vector<Record> records;
  std::string error;
  *ok = ReadJournalSegment(
      path, segment,
      [&](int64_t t, std::string_view frame) {
        records.push_back({t, std::string(frame)});
      },
      result, &error);
  return records;
}

std::vector<Record> SomeRecords(size_t n, uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::vector<Record> records;
  for (size_t i = 0; i < n; ++i) {
    std::string frame(rng() % 300, '\0');
    for (auto& c : frame) c = static_cast<char>(rng() & 0xFF);
    records.push_back({int64_t(rng() >> 2) - (int64_t(1) << 60), frame});
  }
  return records;
}

TEST(Journal, RoundTripsRecordsInOrder) {
  TempDir dir;
  const auto written = SomeRecords(200, 1);
  {
    JournalWriter writer(dir.path(), JournalPolicy{});
    std::string error;
    ASSERT_TRUE(writer.StartSegment(7, &error)) << error;
    for (const auto& r : written) ASSERT_TRUE(writer.Append(r.arrival_ns, r.frame, 0, &error));
  }
  JournalReadResult result;
  bool ok = false;
  const auto read = ReadAllRecords(JournalSegmentPath(dir.path(), 7), 7, &result, &ok);
  ASSERT_TRUE(ok);
  EXPECT_FALSE(result.torn_tail);
  EXPECT_EQ(result.records, written.size());
  EXPECT_EQ(read, written);
}

TEST(Journal, TornTailAtEveryLengthKeepsTheCompleteRecordsOnly) {
  TempDir dir;
  const auto written = SomeRecords(5, 2);
  {
    JournalWriter writer(dir.path(), JournalPolicy{});
    std::string error;
    ASSERT_TRUE(writer.StartSegment(1, &error)) << error;
    for (const auto& r : written) ASSERT_TRUE(writer.Append(r.arrival_ns, r.frame, 0, &error));
  }
  const auto path = JournalSegmentPath(dir.path(), 1);
  const auto full = fs::file_size(path);
  std::vector<uintmax_t> ends{kJournalHeaderBytes};  // byte offset after each complete record
  for (const auto& r : written)
    ends.push_back(ends.back() + kJournalRecordHeaderBytes + r.frame.size());
  ASSERT_EQ(ends.back(), full);
  std::string bytes(full, '\0');
  std::ifstream(path, std::ios::binary).read(bytes.data(), std::streamsize(full));
  for (uintmax_t size = kJournalHeaderBytes; size <= full; ++size) {
    std::ofstream(path, std::ios::binary | std::ios::trunc)
        .write(bytes.data(), std::streamsize(size));
    const size_t complete =
        size_t(std::upper_bound(ends.begin(), ends.end(), size) - ends.begin()) - 1;
    JournalReadResult result;
    bool ok = false;
    const auto read = ReadAllRecords(path, 1, &result, &ok);
    ASSERT_TRUE(ok) << size;
    ASSERT_EQ(read.size(), complete) << size;
    EXPECT_EQ(result.torn_tail, size != ends[complete]) << size;
    for (size_t i = 0; i < complete; ++i) EXPECT_EQ(read[i], written[i]);
  }
}

TEST(Journal, AFlippedByteStopsReadingAtThatRecord) {
  TempDir dir;
  const auto written = SomeRecords(10, 3);
  {
    JournalWriter writer(dir.path(), JournalPolicy{});
    std::string error;
    ASSERT_TRUE(writer.StartSegment(2, &error)) << error;
    for (const auto& r : written) ASSERT_TRUE(writer.Append(r.arrival_ns, r.frame, 0, &error));
  }
  const auto path = JournalSegmentPath(dir.path(), 2);
  size_t fourth = kJournalHeaderBytes;
  for (int i = 0; i < 3; ++i) fourth += kJournalRecordHeaderBytes + written[i].frame.size();
  {
    std::fstream f(path, std::ios::in | std::ios::out | std::ios::binary);
    f.seekg(std::streamoff(fourth + 9));
    char c = 0;
    f.read(&c, 1);
    c = static_cast<char>(c ^ 0x40);
    f.seekp(std::streamoff(fourth + 9));
    f.write(&c, 1);
  }
  JournalReadResult result;
  bool ok = false;
  const auto read = ReadAllRecords(path, 2, &result, &ok);
  ASSERT_TRUE(ok);
  EXPECT_TRUE(result.torn_tail);
  EXPECT_NE(result.tail_reason.find("checksum"), std::string::npos) << result.tail_reason;
  ASSERT_EQ(read.size(), 3u);
  for (size_t i = 0; i < 3; ++i) EXPECT_EQ(read[i], written[i]);
}

TEST(Journal, HeaderOfAnotherSegmentOrNotAJournalIsAnError) {
  TempDir dir;
  std::string error;
  {
    JournalWriter writer(dir.path(), JournalPolicy{});
    ASSERT_TRUE(writer.StartSegment(3, &error)) << error;
  }
  JournalReadResult result;
  bool ok = true;
  ReadAllRecords(JournalSegmentPath(dir.path(), 3), 4, &result, &ok);
  EXPECT_FALSE(ok);
  const auto other = dir.path() / "garbage.blj";
  std::ofstream(other) << "not a journal at all, but long enough";
  ReadAllRecords(other, 0, &result, &ok);
  EXPECT_FALSE(ok);
}

TEST(Journal, NeverFollowsOrReusesAnExistingPath) {
  TempDir dir;
  TempDir elsewhere;
  const auto target = elsewhere.path() / "victim";
  std::ofstream(target) << "keep me";
  fs::create_symlink(target, JournalSegmentPath(dir.path(), 5));
  JournalWriter writer(dir.path(), JournalPolicy{});
  std::string error;
  EXPECT_FALSE(writer.StartSegment(5, &error));
  EXPECT_FALSE(error.empty());
  std::ifstream in(target);
  std::string content;
  std::getline(in, content);
  EXPECT_EQ(content, "keep me");
  EXPECT_FALSE(writer.open());
  // A failed start leaves the current segment in use.
  ASSERT_TRUE(writer.StartSegment(6, &error)) << error;
  EXPECT_FALSE(writer.StartSegment(6, &error));  // exists already
  EXPECT_EQ(writer.segment(), 6u);
  EXPECT_TRUE(writer.Append(1, "x", 0, &error)) << error;
}

TEST(Journal, ListsAndRemovesSegmentsBelowACut) {
  TempDir dir;
  std::string error;
  JournalWriter writer(dir.path(), JournalPolicy{});
  for (uint64_t s : {1u, 2u, 10u, 11u}) ASSERT_TRUE(writer.StartSegment(s, &error)) << error;
  std::ofstream(dir.path() / "journal-1.blj") << "not our name";
  std::ofstream(dir.path() / "journal-99999999999999999999.blj") << "does not fit in 64 bits";
  EXPECT_EQ(ListJournalSegments(dir.path()), (std::vector<uint64_t>{1, 2, 10, 11}));
  ASSERT_TRUE(RemoveJournalSegmentsBelow(dir.path(), 10, &error)) << error;
  EXPECT_EQ(ListJournalSegments(dir.path()), (std::vector<uint64_t>{10, 11}));
}

TEST(Journal, SyncPoliciesSyncWhenTheirConditionIsMet) {
  TempDir dir;
  std::string error;
  JournalPolicy interval{JournalSync::kInterval, 50, 0};
  JournalWriter by_time(dir.path(), interval);
  ASSERT_TRUE(by_time.StartSegment(1, &error)) << error;
  ASSERT_TRUE(by_time.Append(1, "a", 1'000'000'000, &error));
  EXPECT_FALSE(by_time.SyncDue(1'000'000'000 + 49'000'000));
  EXPECT_TRUE(by_time.SyncDue(1'000'000'000 + 50'000'000));
  ASSERT_TRUE(by_time.Append(2, "b", 1'000'000'000 + 60'000'000, &error));  // synced on this one
  EXPECT_FALSE(by_time.SyncDue(1'000'000'000 + 200'000'000));

  JournalPolicy size{JournalSync::kSize, 0, 2 * (kJournalRecordHeaderBytes + 1)};
  JournalWriter by_size(dir.path(), size);
  ASSERT_TRUE(by_size.StartSegment(2, &error)) << error;
  ASSERT_TRUE(by_size.Append(1, "a", 0, &error));
  EXPECT_TRUE(by_size.SyncDue(int64_t(1) << 62));  // unsynced data waits for the size
  ASSERT_TRUE(by_size.Append(2, "b", 0, &error));
  EXPECT_FALSE(by_size.SyncDue(int64_t(1) << 62));
}

}  // namespace
}  // namespace bayline::server
