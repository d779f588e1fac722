// A file in memory (memfd) with a path that any open(2) accepts (/proc/self/fd/N), for fuzz targets
// whose code under test reads a named file. Each Write replaces the whole content.
#pragma once

#include <sys/mman.h>
#include <unistd.h>

#include <cstdint>
#include <cstdlib>
#include <string>

namespace bayline::fuzz {

class MemoryFile {
 public:
  MemoryFile() : fd_(memfd_create("bayline-fuzz", 0)) {
    if (fd_ < 0) std::abort();  // the harness cannot run: not a finding
    path_ = "/proc/self/fd/" + std::to_string(fd_);
  }
  ~MemoryFile() { close(fd_); }
  MemoryFile(const MemoryFile&) = delete;
  MemoryFile& operator=(const MemoryFile&) = delete;

  const std::string& Write(const uint8_t* data, size_t size) {
    if (ftruncate(fd_, 0) != 0) std::abort();
    size_t done = 0;
    while (done < size) {
      const ssize_t n = pwrite(fd_, data + done, size - done, off_t(done));
      if (n <= 0) std::abort();
      done += size_t(n);
    }
    return path_;
  }

 private:
  int fd_;
  std::string path_;
};

}  // namespace bayline::fuzz
