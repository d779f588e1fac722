// Snapshot files: the on-disk container of a serialized bayline.v1.Snapshot.
//
// Layout (all integers little-endian), 40-byte header then the payload:
//   offset  size  field
//        0     8  magic "BAYLSNAP"
//        8     4  format version (kSnapshotFormatVersion)
//       12     4  CRC-32 of the payload
//       16     8  payload length in bytes
//       24     8  config digest (ConfigDigest of the configuration that produced the state)
//       32     4  CRC-32 of bytes 0..31 (so a damaged length is caught before it is trusted)
//       36     4  reserved, 0
//       40     -  payload (exactly `payload length` bytes; anything more or less is an error)
//
// SnapshotStore keeps numbered generations in one directory, `snapshot-<generation>.bls`
// (generation zero-padded to 20 digits, so names sort like numbers). A write goes to a temporary
// file that is fsynced, renamed into place, and the directory fsynced; only then are generations
// older than the newest `keep` removed. A reader therefore always finds the newest complete file,
// and when that one is damaged, the one before it. Files that could not be restored can be moved
// into the `damaged/` subdirectory (MoveAside), where pruning never reaches them.
//
// Hostile directory contents (anyone who can write the directory can plant files):
//   * names are trusted only when they parse to a generation in [1, kMaxSnapshotGeneration]
//     (2^48: one snapshot a second for nine million years); any other `snapshot-*.bls` name, e.g.
//     generation 2^64-1, after which the next generation would wrap to 0, is ignored: never
//     restored, never pruned, never used to number the next file (IgnoredNames lists them);
//   * the temporary file is created with O_CREAT|O_EXCL|O_NOFOLLOW after removing whatever has its
//     name (unlink removes a planted symbolic link itself, not its target), so a write never
//     lands outside the directory; a link planted between the two steps makes the write fail;
//   * snapshot files are opened with O_NOFOLLOW|O_NONBLOCK and must be regular files, so a planted
//     link, FIFO or device is refused as damaged instead of followed or blocked on.
// The state directory itself may be a symbolic link: the operator chose its path, and links are
// common for moving state to another disk; only the entries inside it are never followed.
//
// Thread safety: none; the daemon's supervisor thread owns its store.
#pragma once

#include <cstdint>
#include <filesystem>
#include <span>
#include <string>
#include <string_view>
#include <vector>

namespace bayline::server {

inline constexpr uint32_t kSnapshotFormatVersion = 1;
inline constexpr size_t kSnapshotHeaderBytes = 40;
inline constexpr uint64_t kMaxSnapshotGeneration = uint64_t{1} << 48;
inline constexpr const char* kDamagedSubdirectory = "damaged";

// The container's content once verified.
struct SnapshotFileContents {
  std::string payload;
  uint64_t config_digest = 0;
};

// The header of a payload of `payload_bytes` bytes with CRC-32 `payload_crc`.
std::string EncodeSnapshotHeader(uint32_t payload_crc, uint64_t payload_bytes,
                                 uint64_t config_digest);
// Header + payload, ready to be written.
std::string EncodeSnapshotFile(std::string_view payload, uint64_t config_digest);

// Verifies magic, version, both checksums and the exact length. On success fills *out and returns
// true; otherwise returns false with a one-line reason in *error (and *out unspecified).
bool DecodeSnapshotFile(std::string_view bytes, SnapshotFileContents* out, std::string* error);

// Reads and decodes one file. False with *error naming the path on I/O or format errors.
bool ReadSnapshotFile(const std::filesystem::path& path, SnapshotFileContents* out,
                      std::string* error);

// Writes `bytes` to `path` atomically: temporary file `path`.tmp in the same directory (anything
// already there is removed first; the file is created exclusively, never through a link), fsync,
// rename, fsync the directory. On failure returns false, *error names the failing step and path,
// and `path` still holds its previous content (the temporary file is removed).
bool WriteFileAtomically(const std::filesystem::path& path, std::string_view bytes,
                         std::string* error);
// The same, writing the concatenation of `pieces` (no copy of them is made).
bool WriteFileAtomically(const std::filesystem::path& path,
                         std::span<const std::string_view> pieces, std::string* error);

class SnapshotStore {
 public:
  // `dir` is created (with parents) by Open(). `keep` >= 2 generations are retained.
  explicit SnapshotStore(std::filesystem::path dir, int keep = 2);

  // Creates the directory if needed, removes stale temporary files, learns the newest generation.
  bool Open(std::string* error);

  // Snapshot files present with a sane generation, newest first (names only; contents are not
  // checked).
  std::vector<std::filesystem::path> ListNewestFirst() const;

  // Names in the directory that look like snapshot files but do not parse to a sane generation.
  std::vector<std::string> IgnoredNames() const;

  // Writes the next generation. On success returns true, sets *written_path and *written_bytes,
  // and prunes generations beyond `keep`. On failure nothing already on disk is touched. Fails
  // when the next generation would exceed kMaxSnapshotGeneration.
  bool Write(std::string_view payload, uint64_t config_digest, std::filesystem::path* written_path,
             uint64_t* written_bytes, std::string* error);
  // The same with the payload in pieces (their concatenation), so large payloads are not copied.
  bool Write(std::span<const std::string_view> payload, uint64_t config_digest,
             std::filesystem::path* written_path, uint64_t* written_bytes, std::string* error);

  // Moves one snapshot file of this directory into `damaged/` as `<name>.<UTC time>` (a numeric
  // suffix is added if that name exists), creating the subdirectory, and relearns the newest
  // generation. On success sets *moved_to; on failure returns false with *error and the file stays.
  bool MoveAside(const std::filesystem::path& path, std::filesystem::path* moved_to,
                 std::string* error);

  const std::filesystem::path& dir() const { return dir_; }

 private:
  std::filesystem::path PathOf(uint64_t generation) const;
  void LearnNewestGeneration();

  std::filesystem::path dir_;
  int keep_;
  uint64_t newest_generation_ = 0;
};

}  // namespace bayline::server
