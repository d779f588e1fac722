// Snapshot container: round trip, every kind of damage is detected, atomic replacement, rotation.
#include "daemon/server/snapshot_file.h"

#include <gtest/gtest.h>

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
    ASSERT_TRUE(DecodeSnapshotFile(EncodeSnapshotFile(payload, 0xABCDEF0123456789ull), &out, &error))
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
  // A directory where the temporary file should go makes the create step fail.
  fs::create_directory(target.string() + ".tmp");
  EXPECT_FALSE(WriteFileAtomically(target, "never", &error));
  EXPECT_NE(error.find("create"), std::string::npos) << error;
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

}  // namespace
}  // namespace bayline::server
