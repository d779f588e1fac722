#include "clients/cli/line_source.h"

#include <sys/stat.h>

#include <cerrno>
#include <chrono>
#include <cstring>
#include <thread>

#include "clients/cli/input_error.h"

namespace bayline::cli {

LineSource::LineSource(const std::string& path, bool follow, const std::atomic<bool>* stop)
    : follow_(follow), stop_(stop) {
  if (path == "-") {
    file_ = stdin;
    display_name_ = "<stdin>";
    return;
  }
  display_name_ = path;
  file_ = std::fopen(path.c_str(), "rb");
  if (file_ == nullptr) {
    throw InputError(path + ": cannot open: " + std::strerror(errno));
  }
  owns_file_ = true;
  struct stat st {};
  if (fstat(fileno(file_), &st) == 0 && S_ISREG(st.st_mode)) size_ = st.st_size;
}

LineSource::~LineSource() {
  if (owns_file_) std::fclose(file_);
}

bool LineSource::Next(std::string* line) {
  char buffer[4096];
  while (true) {
    if (std::fgets(buffer, sizeof buffer, file_) != nullptr) {
      pending_ += buffer;
      if (!pending_.empty() && pending_.back() == '\n') {
        pending_.pop_back();
        *line = std::move(pending_);
        pending_.clear();
        ++line_number_;
        return true;
      }
      continue;  // a long line: keep reading it
    }
    if (std::ferror(file_)) {
      throw InputError(display_name_ + ": read error: " + std::strerror(errno));
    }
    // End of what is there now.
    if (follow_ && size_ >= 0) {
      if (stop_ != nullptr && stop_->load()) return false;
      std::clearerr(file_);
      if (on_idle_) on_idle_();
      // Polling a regular file for growth: there is no portable change notification for it.
      std::this_thread::sleep_for(std::chrono::milliseconds(100));
      continue;
    }
    if (!pending_.empty()) {
      *line = std::move(pending_);
      pending_.clear();
      ++line_number_;
      return true;
    }
    return false;
  }
}

double LineSource::Progress() const {
  if (size_ <= 0) return -1.0;
  long pos = std::ftell(file_);
  if (pos < 0) return -1.0;
  double f = static_cast<double>(pos) / static_cast<double>(size_);
  return f > 1.0 ? 1.0 : f;
}

}  // namespace bayline::cli
