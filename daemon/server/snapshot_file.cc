#include "daemon/server/snapshot_file.h"

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <cstring>
#include <ctime>
#include <system_error>

#include "daemon/server/binary_file.h"
#include "daemon/server/crc32.h"

namespace bayline::server {
namespace {

constexpr char kMagic[8] = {'B', 'A', 'Y', 'L', 'S', 'N', 'A', 'P'};
constexpr std::string_view kPrefix = "snapshot-";
constexpr std::string_view kSuffix = ".bls";
constexpr std::string_view kTempSuffix = ".tmp";

bool LooksLikeSnapshotName(const std::string& name) {
  return name.size() > kPrefix.size() + kSuffix.size() && name.starts_with(kPrefix) &&
         name.ends_with(kSuffix);
}

// Generation number of a snapshot file name, or 0 when the name is not one of ours or its number
// is outside [1, kMaxSnapshotGeneration] (checked digit by digit, so no value wraps).
uint64_t GenerationOf(const std::string& name) {
  if (!LooksLikeSnapshotName(name)) return 0;
  const std::string_view digits =
      std::string_view(name).substr(kPrefix.size(), name.size() - kPrefix.size() - kSuffix.size());
  if (digits.size() > 20) return 0;
  uint64_t g = 0;
  for (char c : digits) {
    if (c < '0' || c > '9') return 0;
    g = g * 10 + uint64_t(c - '0');
    if (g > kMaxSnapshotGeneration) return 0;
  }
  return g;
}

}  // namespace

std::string EncodeSnapshotHeader(uint32_t payload_crc, uint64_t payload_bytes,
                                 uint64_t config_digest) {
  std::string out;
  out.reserve(kSnapshotHeaderBytes);
  out.append(kMagic, sizeof kMagic);
  PutLittleEndian32(out, kSnapshotFormatVersion);
  PutLittleEndian32(out, payload_crc);
  PutLittleEndian64(out, payload_bytes);
  PutLittleEndian64(out, config_digest);
  PutLittleEndian32(out, Crc32(std::string_view(out.data(), 32)));
  PutLittleEndian32(out, 0);
  return out;
}

std::string EncodeSnapshotFile(std::string_view payload, uint64_t config_digest) {
  std::string out = EncodeSnapshotHeader(Crc32(payload), payload.size(), config_digest);
  out.append(payload);
  return out;
}

bool DecodeSnapshotFile(std::string_view bytes, SnapshotFileContents* out, std::string* error) {
  if (bytes.size() < kSnapshotHeaderBytes) {
    *error = "truncated header (" + std::to_string(bytes.size()) + " bytes)";
    return false;
  }
  if (std::memcmp(bytes.data(), kMagic, sizeof kMagic) != 0) {
    *error = "not a snapshot file (bad magic)";
    return false;
  }
  if (GetLittleEndian32(bytes, 32) != Crc32(bytes.substr(0, 32))) {
    *error = "header checksum mismatch";
    return false;
  }
  const uint32_t version = GetLittleEndian32(bytes, 8);
  if (version != kSnapshotFormatVersion) {
    *error = "unsupported format version " + std::to_string(version);
    return false;
  }
  const uint64_t length = GetLittleEndian64(bytes, 16);
  const uint64_t present = bytes.size() - kSnapshotHeaderBytes;
  if (present != length) {
    *error = (present < length ? "truncated payload: " : "trailing bytes after payload: ") +
             std::to_string(present) + " bytes present, header says " + std::to_string(length);
    return false;
  }
  std::string_view payload = bytes.substr(kSnapshotHeaderBytes);
  if (Crc32(payload) != GetLittleEndian32(bytes, 12)) {
    *error = "payload checksum mismatch";
    return false;
  }
  out->payload.assign(payload);
  out->config_digest = GetLittleEndian64(bytes, 24);
  return true;
}

bool ReadSnapshotFile(const std::filesystem::path& path, SnapshotFileContents* out,
                      std::string* error) {
  std::string bytes;
  if (!ReadRegularFile(path, &bytes, error)) return false;
  std::string why;
  if (!DecodeSnapshotFile(bytes, out, &why)) {
    *error = path.string() + ": " + why;
    return false;
  }
  return true;
}

bool WriteFileAtomically(const std::filesystem::path& path, std::string_view bytes,
                         std::string* error) {
  return WriteFileAtomically(path, std::span<const std::string_view>(&bytes, 1), error);
}

bool WriteFileAtomically(const std::filesystem::path& path,
                         std::span<const std::string_view> pieces, std::string* error) {
  const std::filesystem::path temp = path.string() + std::string(kTempSuffix);
  // Whatever has the temporary name (a stale file, or a planted link: unlink removes the link, not
  // its target) goes first; the file is then created exclusively and not through a link.
  if (::unlink(temp.c_str()) != 0 && errno != ENOENT) {
    *error = ErrnoText("remove stale", temp);
    return false;
  }
  int fd = ::open(temp.c_str(), O_WRONLY | O_CREAT | O_EXCL | O_NOFOLLOW | O_CLOEXEC, 0644);
  if (fd < 0) {
    *error = ErrnoText("create", temp);
    return false;
  }
  for (const std::string_view piece : pieces) {
    if (!WriteAll(fd, piece.data(), piece.size())) {
      *error = ErrnoText("write", temp);
      ::close(fd);
      ::unlink(temp.c_str());
      return false;
    }
  }
  if (::fsync(fd) != 0) {
    *error = ErrnoText("fsync", temp);
    ::close(fd);
    ::unlink(temp.c_str());
    return false;
  }
  if (::close(fd) != 0) {
    *error = ErrnoText("close", temp);
    ::unlink(temp.c_str());
    return false;
  }
  if (::rename(temp.c_str(), path.c_str()) != 0) {
    *error = ErrnoText("rename " + temp.string() + " to", path);
    ::unlink(temp.c_str());
    return false;
  }
  return FsyncDirectory(path.parent_path().empty() ? "." : path.parent_path(), error);
}

SnapshotStore::SnapshotStore(std::filesystem::path dir, int keep)
    : dir_(std::move(dir)), keep_(std::max(keep, 2)) {}

bool SnapshotStore::Open(std::string* error) {
  std::error_code ec;
  std::filesystem::create_directories(dir_, ec);
  if (ec) {
    *error = "create state directory " + dir_.string() + ": " + ec.message();
    return false;
  }
  for (const auto& entry : std::filesystem::directory_iterator(dir_, ec)) {
    const std::string name = entry.path().filename().string();
    if (name.starts_with(kPrefix) && name.ends_with(kTempSuffix)) {
      std::filesystem::remove(entry.path(), ec);  // left by an interrupted write (a link: the link)
    }
  }
  if (ec) {
    *error = "list state directory " + dir_.string() + ": " + ec.message();
    return false;
  }
  LearnNewestGeneration();
  return true;
}

void SnapshotStore::LearnNewestGeneration() {
  newest_generation_ = 0;
  std::error_code ec;
  for (const auto& entry : std::filesystem::directory_iterator(dir_, ec)) {
    newest_generation_ =
        std::max(newest_generation_, GenerationOf(entry.path().filename().string()));
  }
}

std::vector<std::filesystem::path> SnapshotStore::ListNewestFirst() const {
  std::vector<std::pair<uint64_t, std::filesystem::path>> found;
  std::error_code ec;
  for (const auto& entry : std::filesystem::directory_iterator(dir_, ec)) {
    uint64_t g = GenerationOf(entry.path().filename().string());
    if (g != 0) found.emplace_back(g, entry.path());
  }
  std::sort(found.begin(), found.end(),
            [](const auto& a, const auto& b) { return a.first > b.first; });
  std::vector<std::filesystem::path> paths;
  for (auto& [g, p] : found) paths.push_back(std::move(p));
  return paths;
}

std::vector<std::string> SnapshotStore::IgnoredNames() const {
  std::vector<std::string> names;
  std::error_code ec;
  for (const auto& entry : std::filesystem::directory_iterator(dir_, ec)) {
    const std::string name = entry.path().filename().string();
    if (LooksLikeSnapshotName(name) && GenerationOf(name) == 0) names.push_back(name);
  }
  std::sort(names.begin(), names.end());
  return names;
}

bool SnapshotStore::MoveAside(const std::filesystem::path& path, std::filesystem::path* moved_to,
                              std::string* error) {
  const std::filesystem::path aside = dir_ / kDamagedSubdirectory;
  std::error_code ec;
  std::filesystem::create_directories(aside, ec);
  if (ec) {
    *error = "create " + aside.string() + ": " + ec.message();
    return false;
  }
  char stamp[32];
  const std::time_t now = std::time(nullptr);
  std::tm utc{};
  gmtime_r(&now, &utc);
  std::strftime(stamp, sizeof stamp, "%Y%m%dT%H%M%SZ", &utc);
  const std::string base = path.filename().string() + "." + stamp;
  std::filesystem::path target = aside / base;
  for (int n = 1;
       std::filesystem::symlink_status(target, ec).type() != std::filesystem::file_type::not_found;
       ++n) {
    target = aside / (base + "." + std::to_string(n));
  }
  if (::rename(path.c_str(), target.c_str()) != 0) {
    *error = ErrnoText("move " + path.string() + " to", target);
    return false;
  }
  LearnNewestGeneration();
  *moved_to = target;
  std::string
      not_durable;  // the move is done; a failed fsync only risks it being undone by a crash
  FsyncDirectory(dir_, &not_durable);
  return true;
}

std::filesystem::path SnapshotStore::PathOf(uint64_t generation) const {
  char name[64];
  std::snprintf(name, sizeof name, "snapshot-%020llu.bls",
                static_cast<unsigned long long>(generation));
  return dir_ / name;
}

bool SnapshotStore::Write(std::string_view payload, uint64_t config_digest,
                          std::filesystem::path* written_path, uint64_t* written_bytes,
                          std::string* error) {
  return Write(std::span<const std::string_view>(&payload, 1), config_digest, written_path,
               written_bytes, error);
}

bool SnapshotStore::Write(std::span<const std::string_view> payload, uint64_t config_digest,
                          std::filesystem::path* written_path, uint64_t* written_bytes,
                          std::string* error) {
  const uint64_t generation = newest_generation_ + 1;
  if (generation > kMaxSnapshotGeneration) {
    *error = "snapshot generation " + std::to_string(generation) + " in " + dir_.string() +
             " exceeds " + std::to_string(kMaxSnapshotGeneration) + ": move the old files away";
    return false;
  }
  const std::filesystem::path path = PathOf(generation);
  uint32_t crc = 0;
  uint64_t payload_bytes = 0;
  for (const std::string_view piece : payload) {
    crc = Crc32(piece, crc);
    payload_bytes += piece.size();
  }
  const std::string header = EncodeSnapshotHeader(crc, payload_bytes, config_digest);
  std::vector<std::string_view> pieces{header};
  pieces.insert(pieces.end(), payload.begin(), payload.end());
  if (!WriteFileAtomically(path, pieces, error)) return false;
  newest_generation_ = generation;
  *written_path = path;
  *written_bytes = header.size() + payload_bytes;
  // Prune only after the new generation is durable.
  std::vector<std::filesystem::path> all = ListNewestFirst();
  std::error_code ec;
  for (size_t i = size_t(keep_); i < all.size(); ++i) std::filesystem::remove(all[i], ec);
  return true;
}

}  // namespace bayline::server
