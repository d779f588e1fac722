// Write-ahead journal of accepted ingest frames.
//
// With the journal on, the ingest thread appends every frame it accepts to the current journal
// segment before routing its observations to the workers. A snapshot cuts the stream: the frames
// of segments below the snapshot's first uncovered segment are in the snapshot; a restart restores
// the snapshot and then replays the segments from that one on, in order, through the same path as
// live frames. Once a snapshot is durable, the segments it covers are deleted.
//
// Files: `journal-<segment>.blj` in the state directory (segment zero-padded to 20 digits, so
// names sort like numbers). Layout (integers little-endian):
//   file header, 24 bytes: magic "BAYLJRNL" (8), format version (4), reserved 0 (4),
//                          segment number (8)
//   records, each:         payload length n (4), CRC-32 of bytes 8.. of the record (4),
//                          arrival time in ns since the epoch (8), the frame's bytes (n)
// A record is complete when its length, checksum and bytes are all present and agree. Reading
// stops at the first incomplete or damaged record: a crash can only leave a torn tail, since
// records are appended in one write(2) each, and nothing after a damaged record is trusted.
//
// Durability (the window each policy can lose):
//   every_frame  each record is written and fdatasync'ed before Append returns: nothing the
//                ingest thread accepted is lost, on kill -9 or on power loss.
//   interval     each record is written at once (kill -9 loses nothing: the kernel holds it);
//                fdatasync at most every `interval_ms`: power loss loses up to interval_ms of
//                frames.
//   size         each record is written at once; fdatasync when `sync_bytes` unsynced bytes
//                accumulated: power loss loses up to sync_bytes of frames.
//
// Thread safety: none. The ingest thread owns the writer; the supervisor reads segments before
// the ingest thread starts.
#pragma once

#include <cstdint>
#include <filesystem>
#include <functional>
#include <string>
#include <string_view>
#include <vector>

namespace bayline::server {

enum class JournalSync { kEveryFrame, kInterval, kSize };

struct JournalPolicy {
  JournalSync sync = JournalSync::kEveryFrame;
  uint32_t interval_ms = 100;               // kInterval
  uint64_t sync_bytes = uint64_t(1) << 20;  // kSize
};

inline constexpr uint32_t kJournalFormatVersion = 1;
inline constexpr size_t kJournalHeaderBytes = 24;
inline constexpr size_t kJournalRecordHeaderBytes = 16;

// Path of segment `segment` in `dir`.
std::filesystem::path JournalSegmentPath(const std::filesystem::path& dir, uint64_t segment);

// Segment numbers of the journal files in `dir`, ascending (names only; contents not checked).
// Names that do not parse to a segment number are ignored.
std::vector<uint64_t> ListJournalSegments(const std::filesystem::path& dir);

// Removes every segment below `first_kept`. False with *error naming the first file that could
// not be removed (the others are still tried).
bool RemoveJournalSegmentsBelow(const std::filesystem::path& dir, uint64_t first_kept,
                                std::string* error);

struct JournalReadResult {
  uint64_t records = 0;     // complete records delivered
  bool torn_tail = false;   // bytes after the last complete record (a crash mid-append, or damage)
  std::string tail_reason;  // why reading stopped early, when torn_tail
};

// Calls `on_record(arrival_ns, frame)` for each complete record of one segment, in order. False
// with *error when the file cannot be opened or its header is not a journal header for `segment`
// (no record delivered then); a torn tail is not an error (see JournalReadResult).
bool ReadJournalSegment(const std::filesystem::path& path, uint64_t segment,
                        const std::function<void(int64_t, std::string_view)>& on_record,
                        JournalReadResult* result, std::string* error);

class JournalWriter {
 public:
  JournalWriter(std::filesystem::path dir, JournalPolicy policy);
  ~JournalWriter();
  JournalWriter(const JournalWriter&) = delete;
  JournalWriter& operator=(const JournalWriter&) = delete;

  // Starts segment `segment`: creates its file (refusing to follow a symbolic link or to reuse an
  // existing file), writes and syncs the header and the directory. Closes the previous segment
  // after syncing it. False with *error; the previous segment then stays current.
  bool StartSegment(uint64_t segment, std::string* error);

  // Appends one record to the current segment and syncs per the policy. `now_ns` (a monotonic
  // clock) drives the interval policy. False with *error on an I/O failure: the record may be
  // partly written (a torn tail that readers skip), and the caller must not treat the frame as
  // journaled.
  bool Append(int64_t arrival_ns, std::string_view frame, int64_t now_ns, std::string* error);

  // Syncs whatever is written but not yet synced (the interval policy's timer, and shutdown).
  bool Sync(std::string* error);

  // Whether the interval policy has unsynced data older than its interval at `now_ns`.
  bool SyncDue(int64_t now_ns) const;

  // When the interval policy must next sync (monotonic ns); -1 when nothing waits for the timer.
  int64_t sync_deadline_ns() const {
    if (policy_.sync != JournalSync::kInterval || unsynced_bytes_ == 0) return -1;
    return first_unsynced_ns_ + int64_t(policy_.interval_ms) * 1'000'000;
  }

  uint64_t segment() const { return segment_; }
  bool open() const { return fd_ >= 0; }
  uint64_t bytes_written() const { return bytes_written_; }

 private:
  void Close();

  std::filesystem::path dir_;
  JournalPolicy policy_;
  int fd_ = -1;
  uint64_t segment_ = 0;
  uint64_t unsynced_bytes_ = 0;
  int64_t first_unsynced_ns_ = 0;
  uint64_t bytes_written_ = 0;
  std::string record_;  // reused record buffer
};

}  // namespace bayline::server
