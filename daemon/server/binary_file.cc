#include "daemon/server/binary_file.h"

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>
#include <cstring>

namespace bayline::server {

void PutLittleEndian32(std::string& out, uint32_t v) {
  for (int i = 0; i < 4; ++i) out.push_back(static_cast<char>((v >> (8 * i)) & 0xFFu));
}

void PutLittleEndian64(std::string& out, uint64_t v) {
  for (int i = 0; i < 8; ++i) out.push_back(static_cast<char>((v >> (8 * i)) & 0xFFu));
}

uint32_t GetLittleEndian32(std::string_view bytes, size_t at) {
  uint32_t v = 0;
  for (int i = 0; i < 4; ++i) v |= uint32_t(static_cast<unsigned char>(bytes[at + i])) << (8 * i);
  return v;
}

uint64_t GetLittleEndian64(std::string_view bytes, size_t at) {
  uint64_t v = 0;
  for (int i = 0; i < 8; ++i) v |= uint64_t(static_cast<unsigned char>(bytes[at + i])) << (8 * i);
  return v;
}

std::string ErrnoText(std::string_view step, const std::filesystem::path& path) {
  return std::string(step) + " " + path.string() + ": " + std::strerror(errno);
}

bool ReadRegularFile(const std::filesystem::path& path, std::string* bytes, std::string* error) {
  bytes->clear();
  const int fd = ::open(path.c_str(), O_RDONLY | O_NOFOLLOW | O_NONBLOCK | O_CLOEXEC);
  if (fd < 0) {
    *error = ErrnoText("open", path);
    return false;
  }
  struct stat st {};
  if (::fstat(fd, &st) != 0 || !S_ISREG(st.st_mode)) {
    *error = path.string() + ": not a regular file";
    ::close(fd);
    return false;
  }
  bytes->reserve(size_t(st.st_size));
  char buffer[1 << 16];
  for (;;) {
    const ssize_t n = ::read(fd, buffer, sizeof buffer);
    if (n < 0 && errno == EINTR) continue;
    if (n < 0) {
      *error = ErrnoText("read", path);
      ::close(fd);
      return false;
    }
    if (n == 0) break;
    bytes->append(buffer, size_t(n));
  }
  ::close(fd);
  return true;
}

bool WriteAll(int fd, const char* data, size_t size) {
  while (size > 0) {
    const ssize_t n = ::write(fd, data, size);
    if (n < 0) {
      if (errno == EINTR) continue;
      return false;
    }
    data += n;
    size -= size_t(n);
  }
  return true;
}

bool FsyncDirectory(const std::filesystem::path& dir, std::string* error) {
  const int fd = ::open(dir.c_str(), O_RDONLY | O_DIRECTORY | O_CLOEXEC);
  if (fd < 0) {
    *error = ErrnoText("open directory", dir);
    return false;
  }
  const bool ok = ::fsync(fd) == 0;
  if (!ok) *error = ErrnoText("fsync directory", dir);
  ::close(fd);
  return ok;
}

}  // namespace bayline::server
