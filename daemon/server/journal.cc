#include "daemon/server/journal.h"

#include <fcntl.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <cstdio>
#include <cstring>
#include <system_error>

#include "daemon/server/binary_file.h"
#include "daemon/server/crc32.h"

namespace bayline::server {
namespace {

constexpr char kMagic[8] = {'B', 'A', 'Y', 'L', 'J', 'R', 'N', 'L'};
constexpr std::string_view kPrefix = "journal-";
constexpr std::string_view kSuffix = ".blj";
// A record longer than this is damage, not a frame (the ingest socket's limits are far smaller).
constexpr uint32_t kMaxRecordPayload = uint32_t(1) << 30;

// Segment number of a journal file name; false when the name is not one of ours.
bool SegmentOf(const std::string& name, uint64_t* segment) {
  if (name.size() != kPrefix.size() + 20 + kSuffix.size()) return false;
  if (name.compare(0, kPrefix.size(), kPrefix) != 0) return false;
  if (name.compare(name.size() - kSuffix.size(), kSuffix.size(), kSuffix) != 0) return false;
  uint64_t s = 0;
  for (size_t i = kPrefix.size(); i < kPrefix.size() + 20; ++i) {
    const char c = name[i];
    if (c < '0' || c > '9') return false;
    const uint64_t digit = uint64_t(c - '0');
    if (s > (UINT64_MAX - digit) / 10) return false;  // does not fit: not a name we write
    s = s * 10 + digit;
  }
  *segment = s;
  return true;
}

}  // namespace

std::filesystem::path JournalSegmentPath(const std::filesystem::path& dir, uint64_t segment) {
  char name[64];
  std::snprintf(name, sizeof name, "journal-%020llu.blj", static_cast<unsigned long long>(segment));
  return dir / name;
}

std::vector<uint64_t> ListJournalSegments(const std::filesystem::path& dir) {
  std::vector<uint64_t> segments;
  std::error_code ec;
  for (const auto& entry : std::filesystem::directory_iterator(dir, ec)) {
    uint64_t s = 0;
    if (entry.is_regular_file(ec) && SegmentOf(entry.path().filename().string(), &s)) {
      segments.push_back(s);
    }
  }
  std::sort(segments.begin(), segments.end());
  return segments;
}

bool RemoveJournalSegmentsBelow(const std::filesystem::path& dir, uint64_t first_kept,
                                std::string* error) {
  bool ok = true;
  for (uint64_t s : ListJournalSegments(dir)) {
    if (s >= first_kept) break;
    const auto path = JournalSegmentPath(dir, s);
    if (::unlink(path.c_str()) != 0 && errno != ENOENT && ok) {
      *error = ErrnoText("remove", path);
      ok = false;
    }
  }
  return ok;
}

bool ReadJournalSegment(const std::filesystem::path& path, uint64_t segment,
                        const std::function<void(int64_t, std::string_view)>& on_record,
                        JournalReadResult* result, std::string* error) {
  *result = JournalReadResult{};
  std::string bytes;
  if (!ReadRegularFile(path, &bytes, error)) return false;
  if (bytes.size() < kJournalHeaderBytes || std::memcmp(bytes.data(), kMagic, 8) != 0) {
    *error = path.string() + ": not a journal segment (bad magic or short header)";
    return false;
  }
  if (GetLittleEndian32(bytes, 8) != kJournalFormatVersion) {
    *error = path.string() + ": journal format version " +
             std::to_string(GetLittleEndian32(bytes, 8)) + " is not " +
             std::to_string(kJournalFormatVersion);
    return false;
  }
  if (GetLittleEndian64(bytes, 16) != segment) {
    *error =
        path.string() + ": header names segment " + std::to_string(GetLittleEndian64(bytes, 16));
    return false;
  }
  size_t at = kJournalHeaderBytes;
  while (at < bytes.size()) {
    if (bytes.size() - at < kJournalRecordHeaderBytes) {
      result->torn_tail = true;
      result->tail_reason = "incomplete record header at byte " + std::to_string(at);
      break;
    }
    const uint32_t length = GetLittleEndian32(bytes, at);
    const uint32_t crc = GetLittleEndian32(bytes, at + 4);
    if (length > kMaxRecordPayload || bytes.size() - at - kJournalRecordHeaderBytes < length) {
      result->torn_tail = true;
      result->tail_reason = "incomplete record at byte " + std::to_string(at);
      break;
    }
    const std::string_view covered(bytes.data() + at + 8, 8 + size_t(length));
    if (Crc32(covered) != crc) {
      result->torn_tail = true;
      result->tail_reason = "checksum mismatch at byte " + std::to_string(at);
      break;
    }
    const auto arrival_ns = static_cast<int64_t>(GetLittleEndian64(bytes, at + 8));
    on_record(arrival_ns, covered.substr(8));
    ++result->records;
    at += kJournalRecordHeaderBytes + length;
  }
  return true;
}

JournalWriter::JournalWriter(std::filesystem::path dir, JournalPolicy policy)
    : dir_(std::move(dir)), policy_(policy) {}

JournalWriter::~JournalWriter() {
  std::string ignored;
  if (fd_ >= 0) (void)Sync(&ignored);  // best effort at destruction; Sync() reports failures
  Close();
}

void JournalWriter::Close() {
  if (fd_ >= 0) ::close(fd_);
  fd_ = -1;
}

bool JournalWriter::StartSegment(uint64_t segment, std::string* error) {
  const auto path = JournalSegmentPath(dir_, segment);
  const int fd = ::open(path.c_str(), O_WRONLY | O_CREAT | O_EXCL | O_NOFOLLOW | O_CLOEXEC, 0600);
  if (fd < 0) {
    *error = ErrnoText("create", path);
    return false;
  }
  std::string header(kMagic, 8);
  PutLittleEndian32(header, kJournalFormatVersion);
  PutLittleEndian32(header, 0);
  PutLittleEndian64(header, segment);
  if (!WriteAll(fd, header.data(), header.size()) || ::fdatasync(fd) != 0) {
    *error = ErrnoText("write header of", path);
    ::close(fd);
    ::unlink(path.c_str());
    return false;
  }
  if (!FsyncDirectory(dir_, error)) {
    ::close(fd);
    ::unlink(path.c_str());
    return false;
  }
  if (fd_ >= 0 && !Sync(error)) {
    ::close(fd);
    ::unlink(path.c_str());
    return false;
  }
  Close();
  fd_ = fd;
  segment_ = segment;
  unsynced_bytes_ = 0;
  bytes_written_ = header.size();
  return true;
}

bool JournalWriter::Append(int64_t arrival_ns, std::string_view frame, int64_t now_ns,
                           std::string* error) {
  if (fd_ < 0) {
    *error = "journal: no open segment";
    return false;
  }
  if (frame.size() > kMaxRecordPayload) {
    *error = "journal: frame of " + std::to_string(frame.size()) + " bytes is too large";
    return false;
  }
  record_.clear();
  PutLittleEndian32(record_, uint32_t(frame.size()));
  PutLittleEndian32(record_, 0);  // checksum, filled below
  PutLittleEndian64(record_, static_cast<uint64_t>(arrival_ns));
  record_.append(frame);
  const uint32_t crc = Crc32(std::string_view(record_).substr(8));
  for (int i = 0; i < 4; ++i) record_[4 + i] = static_cast<char>((crc >> (8 * i)) & 0xFFu);
  if (!WriteAll(fd_, record_.data(), record_.size())) {
    *error = ErrnoText("append to", JournalSegmentPath(dir_, segment_));
    return false;
  }
  bytes_written_ += record_.size();
  if (unsynced_bytes_ == 0) first_unsynced_ns_ = now_ns;
  unsynced_bytes_ += record_.size();
  switch (policy_.sync) {
    case JournalSync::kEveryFrame:
      return Sync(error);
    case JournalSync::kSize:
      return unsynced_bytes_ >= policy_.sync_bytes ? Sync(error) : true;
    case JournalSync::kInterval:
      return SyncDue(now_ns) ? Sync(error) : true;
  }
  return true;
}

bool JournalWriter::SyncDue(int64_t now_ns) const {
  return unsynced_bytes_ > 0 &&
         now_ns - first_unsynced_ns_ >= int64_t(policy_.interval_ms) * 1'000'000;
}

bool JournalWriter::Sync(std::string* error) {
  if (fd_ < 0 || unsynced_bytes_ == 0) return true;
  if (::fdatasync(fd_) != 0) {
    *error = ErrnoText("fdatasync", JournalSegmentPath(dir_, segment_));
    return false;
  }
  unsynced_bytes_ = 0;
  return true;
}

}  // namespace bayline::server
