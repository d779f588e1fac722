// Snapshot container: round trip, every kind of damage is detected, atomic replacement, rotation.
#include "daemon/server/snapshot_file.h"

#include <gtest/gtest.h>
#include <sys/stat.h>

#include <algorithm>
#include <filesystem>
#include <fstream>
#include <random>

#include "daemon/server/crc32.h"

namespace bayline::server {
namespace {

namespace fs = std::filesystem;

std::string RandomBytes(size_t n, uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::string s(n, '\0');
  for (auto& c : s) c = static_cast<char>(rng() & 0xFF);
  return s;
}

class TempDir {
 public:
  TempDir() {
    std::random_device rd;
    path_ = fs::temp_directory_path() /
            ("bayline-snapshot-test-" + std::to_string(rd()) + std::to_string(rd()));
    fs::create_directories(path_);
  }
  ~TempDir() { fs::remove_all(path_); }
  const fs::path& path() const { return path_; }

 private:
  fs::path path_;
};

std::string ReadAll(const fs::path& p) {
  std::ifstream in(p, std::ios::binary);
  return std::string(std::istreambuf_iterator<char>(in), {});
}

void WriteAll(const fs::path& p, std::string_view bytes) {
  std::ofstream out(p, std::ios::binary | std::ios::trunc);
  out.write(bytes.data(), std::streamsize(bytes.size()));
}

TEST(Crc32Test, MatchesTheStandardCheckValue) {
  // The CRC-32 check value of "123456789" is 0xCBF43926 (common practice, no source).
  EXPECT_EQ(Crc32("123456789"), 0xCBF43926u);
  EXPECT_EQ(Crc32(""), 0u);
  EXPECT_EQ(Crc32("6789", Crc32("12345")), Crc32("123456789"));
}

TEST(SnapshotFileTest, RoundTripsPayloadAndDigest) {
  for (size_t n : {size_t(0), size_t(1), size_t(1000), size_t(100000)}) {
    std::string payload = RandomBytes(n, n + 1);
    SnapshotFileContents out;
    std::string error;
    ASSERT_TRUE(
        DecodeSnapshotFile(EncodeSnapshotFile(payload, 0xABCDEF0123456789ull), &out, &error))
        << error;
    EXPECT_EQ(out.payload, payload);
    EXPECT_EQ(out.config_digest, 0xABCDEF0123456789ull);
  }
}

TEST(SnapshotFileTest, DetectsEverySingleBitFlip) {
  const std::string file = EncodeSnapshotFile(RandomBytes(300, 7), 42);
  for (size_t byte = 0; byte < file.size(); ++byte) {
    if (byte >= 36 && byte < 40) continue;  // reserved bytes are not interpreted
    for (int bit = 0; bit < 8; ++bit) {
      std::string damaged = file;
      damaged[byte] = static_cast<char>(damaged[byte] ^ (1 << bit));
      SnapshotFileContents out;
      std::string error;
      EXPECT_FALSE(DecodeSnapshotFile(damaged, &out, &error)) << "byte " << byte << " bit " << bit;
      EXPECT_FALSE(error.empty());
    }
  }
}

TEST(SnapshotFileTest, DetectsTruncationAtEveryLengthAndTrailingBytes) {
  const std::string file = EncodeSnapshotFile(RandomBytes(200, 9), 1);
  for (size_t len = 0; len < file.size(); ++len) {
    SnapshotFileContents out;
    std::string error;
    EXPECT_FALSE(DecodeSnapshotFile(std::string_view(file).substr(0, len), &out, &error)) << len;
  }
  SnapshotFileContents out;
  std::string error;
  EXPECT_FALSE(DecodeSnapshotFile(file + "x", &out, &error));
  EXPECT_NE(error.find("trailing"), std::string::npos) << error;
}

TEST(SnapshotFileTest, RejectsForeignFilesAndOtherVersions) {
  SnapshotFileContents out;
  std::string error;
  EXPECT_FALSE(DecodeSnapshotFile(std::string(64, 'z'), &out, &error));
  EXPECT_NE(error.find("magic"), std::string::npos) << error;
  std::string file = EncodeSnapshotFile("abc", 1);
  file[8] = 2;  // version 2, header checksum recomputed so only the version is wrong
  uint32_t crc = Crc32(std::string_view(file).substr(0, 32));
  for (int i = 0; i < 4; ++i) file[32 + i] = static_cast<char>((crc >> (8 * i)) & 0xFF);
  EXPECT_FALSE(DecodeSnapshotFile(file, &out, &error));
  EXPECT_NE(error.find("version 2"), std::string::npos) << error;
}

TEST(SnapshotFileTest, AtomicWriteReplacesContentAndLeavesNoTemporary) {
  TempDir dir;
  const fs::path target = dir.path() / "state.bin";
  std::string error;
  ASSERT_TRUE(WriteFileAtomically(target, "first", &error)) << error;
  ASSERT_TRUE(WriteFileAtomically(target, "second version", &error)) << error;
  EXPECT_EQ(ReadAll(target), "second version");
  EXPECT_EQ(std::distance(fs::directory_iterator(dir.path()), fs::directory_iterator()), 1);
}

TEST(SnapshotFileTest, FailedAtomicWriteKeepsTheOldContent) {
  TempDir dir;
  const fs::path target = dir.path() / "state.bin";
  std::string error;
  ASSERT_TRUE(WriteFileAtomically(target, "good", &error)) << error;
  // A directory where the temporary file should go cannot be removed: the write fails.
  fs::create_directory(target.string() + ".tmp");
  EXPECT_FALSE(WriteFileAtomically(target, "never", &error));
  EXPECT_NE(error.find("state.bin.tmp"), std::string::npos) << error;
  EXPECT_EQ(ReadAll(target), "good");
}

TEST(SnapshotStoreTest, KeepsTheNewestTwoGenerationsNewestFirst) {
  TempDir dir;
  SnapshotStore store(dir.path() / "nested" / "state");
  std::string error;
  ASSERT_TRUE(store.Open(&error)) << error;
  std::vector<fs::path> written;
  for (int i = 0; i < 5; ++i) {
    fs::path p;
    uint64_t bytes = 0;
    ASSERT_TRUE(store.Write("payload " + std::to_string(i), 7, &p, &bytes, &error)) << error;
    EXPECT_EQ(bytes, kSnapshotHeaderBytes + 9);
    written.push_back(p);
  }
  auto listed = store.ListNewestFirst();
  ASSERT_EQ(listed.size(), 2u);
  EXPECT_EQ(listed[0], written[4]);
  EXPECT_EQ(listed[1], written[3]);
  SnapshotFileContents contents;
  ASSERT_TRUE(ReadSnapshotFile(listed[0], &contents, &error)) << error;
  EXPECT_EQ(contents.payload, "payload 4");
}

TEST(SnapshotStoreTest, ReopenContinuesNumberingAndRemovesStaleTemporaries) {
  TempDir dir;
  std::string error;
  fs::path first;
  uint64_t bytes = 0;
  {
    SnapshotStore store(dir.path());
    ASSERT_TRUE(store.Open(&error));
    ASSERT_TRUE(store.Write("a", 1, &first, &bytes, &error)) << error;
  }
  WriteAll(dir.path() / "snapshot-00000000000000000099.bls.tmp", "half written");
  SnapshotStore store(dir.path());
  ASSERT_TRUE(store.Open(&error)) << error;
  EXPECT_FALSE(fs::exists(dir.path() / "snapshot-00000000000000000099.bls.tmp"));
  fs::path second;
  ASSERT_TRUE(store.Write("b", 1, &second, &bytes, &error)) << error;
  EXPECT_GT(second.filename().string(), first.filename().string());
  EXPECT_EQ(store.ListNewestFirst().front(), second);
}

TEST(SnapshotStoreTest, DamagedNewestIsReportedAndThePreviousStillReads) {
  TempDir dir;
  SnapshotStore store(dir.path());
  std::string error;
  ASSERT_TRUE(store.Open(&error));
  fs::path p;
  uint64_t bytes = 0;
  ASSERT_TRUE(store.Write("old state", 1, &p, &bytes, &error));
  ASSERT_TRUE(store.Write("new state", 1, &p, &bytes, &error));
  std::string content = ReadAll(p);
  WriteAll(p, content.substr(0, content.size() - 3));  // truncated
  auto listed = store.ListNewestFirst();
  ASSERT_EQ(listed.size(), 2u);
  SnapshotFileContents contents;
  EXPECT_FALSE(ReadSnapshotFile(listed[0], &contents, &error));
  EXPECT_NE(error.find(listed[0].string()), std::string::npos) << error;
  ASSERT_TRUE(ReadSnapshotFile(listed[1], &contents, &error)) << error;
  EXPECT_EQ(contents.payload, "old state");
}

TEST(SnapshotFileTest, PlantedLinkAtTheTemporaryNameIsRemovedNotFollowed) {
  TempDir dir;
  const fs::path target = dir.path() / "state.bin";
  const fs::path victim = dir.path() / "victim.txt";
  WriteAll(victim, "precious");
  fs::create_symlink(victim, target.string() + ".tmp");
  std::string error;
  ASSERT_TRUE(WriteFileAtomically(target, "state", &error)) << error;
  EXPECT_EQ(ReadAll(victim), "precious");
  EXPECT_EQ(ReadAll(target), "state");
  EXPECT_EQ(fs::symlink_status(target).type(), fs::file_type::regular);
  EXPECT_FALSE(fs::exists(fs::symlink_status(target.string() + ".tmp")));
}

TEST(SnapshotFileTest, ReadRefusesLinksAndFifos) {
  TempDir dir;
  const fs::path real = dir.path() / "real.bls";
  WriteAll(real, EncodeSnapshotFile("payload", 1));
  const fs::path link = dir.path() / "link.bls";
  fs::create_symlink(real, link);
  SnapshotFileContents contents;
  std::string error;
  ASSERT_TRUE(ReadSnapshotFile(real, &contents, &error)) << error;
  EXPECT_FALSE(ReadSnapshotFile(link, &contents, &error));
  const fs::path fifo = dir.path() / "fifo.bls";
  ASSERT_EQ(::mkfifo(fifo.c_str(), 0600), 0);
  EXPECT_FALSE(ReadSnapshotFile(fifo, &contents, &error));  // refused at once, not blocked on
  EXPECT_NE(error.find("not a regular file"), std::string::npos) << error;
}

TEST(SnapshotStoreTest, NamesWithoutASaneGenerationAreIgnoredNotNumberedAfter) {
  TempDir dir;
  // 2^64-1 (the next would wrap to 0), a number that overflows 64 bits, 0, and beyond 2^48.
  const std::vector<std::string> planted = {
      "snapshot-18446744073709551615.bls", "snapshot-99999999999999999999.bls",
      "snapshot-00000000000000000000.bls", "snapshot-00000281474976710657.bls"};
  for (const auto& name : planted) WriteAll(dir.path() / name, EncodeSnapshotFile("planted", 1));
  SnapshotStore store(dir.path());
  std::string error;
  ASSERT_TRUE(store.Open(&error)) << error;
  EXPECT_TRUE(store.ListNewestFirst().empty());
  auto ignored = store.IgnoredNames();
  auto expected = planted;
  std::sort(expected.begin(), expected.end());
  EXPECT_EQ(ignored, expected);
  fs::path p;
  uint64_t bytes = 0;
  for (int i = 0; i < 3; ++i) ASSERT_TRUE(store.Write("ours", 1, &p, &bytes, &error)) << error;
  EXPECT_EQ(p.filename(), "snapshot-00000000000000000003.bls");
  EXPECT_EQ(store.ListNewestFirst().front(), p);
  for (const auto& name : planted) EXPECT_TRUE(fs::exists(dir.path() / name)) << name;
}

TEST(SnapshotStoreTest, TheLastSaneGenerationIsRestoredButNotWrittenBeyond) {
  TempDir dir;
  WriteAll(dir.path() / "snapshot-00000281474976710656.bls", EncodeSnapshotFile("last", 1));
  SnapshotStore store(dir.path());
  std::string error;
  ASSERT_TRUE(store.Open(&error)) << error;
  ASSERT_EQ(store.ListNewestFirst().size(), 1u);
  fs::path p;
  uint64_t bytes = 0;
  EXPECT_FALSE(store.Write("next", 1, &p, &bytes, &error));
  EXPECT_NE(error.find("exceeds"), std::string::npos) << error;
}

TEST(SnapshotStoreTest, MoveAsideKeepsAFileOutOfRotationAndPruning) {
  TempDir dir;
  SnapshotStore store(dir.path());
  std::string error;
  ASSERT_TRUE(store.Open(&error));
  fs::path p;
  uint64_t bytes = 0;
  ASSERT_TRUE(store.Write("one", 1, &p, &bytes, &error));
  ASSERT_TRUE(store.Write("two", 1, &p, &bytes, &error));
  fs::path moved;
  ASSERT_TRUE(store.MoveAside(p, &moved, &error)) << error;
  EXPECT_EQ(moved.parent_path(), dir.path() / "damaged");
  EXPECT_TRUE(moved.filename().string().starts_with("snapshot-00000000000000000002.bls."));
  EXPECT_EQ(ReadAll(moved), EncodeSnapshotFile("two", 1));
  fs::path again;
  ASSERT_TRUE(store.Write("two again", 1, &again, &bytes, &error));
  ASSERT_TRUE(store.MoveAside(again, &again, &error)) << error;  // same second: a second name
  EXPECT_NE(again, moved);
  for (int i = 0; i < 4; ++i) ASSERT_TRUE(store.Write("more", 1, &p, &bytes, &error));
  EXPECT_TRUE(fs::exists(moved));
  EXPECT_TRUE(fs::exists(again));
  EXPECT_EQ(store.ListNewestFirst().size(), 2u);
}

}  // namespace
}  // namespace bayline::server
