// LineSource: lines of a file or of standard input ("-"), optionally following a growing file
// (after the end, wait for more lines to be appended, until `stop` becomes true). A last line
// without its newline is held back while following (it may still be being written).
// Thread safety: none; `stop` may be set from a signal handler.
#pragma once

#include <atomic>
#include <cstdint>
#include <cstdio>
#include <functional>
#include <string>

namespace bayline::cli {

class LineSource {
 public:
  // Opens `path` ("-" = stdin). Throws InputError when the file cannot be opened.
  LineSource(const std::string& path, bool follow, const std::atomic<bool>* stop);
  ~LineSource();
  LineSource(const LineSource&) = delete;
  LineSource& operator=(const LineSource&) = delete;

  // Next line without its '\n'; false at the end (or, when following, once `stop` is set).
  bool Next(std::string* line);
  int64_t line_number() const { return line_number_; }
  // The name used in error messages: the path, or "<stdin>".
  const std::string& display_name() const { return display_name_; }
  // Fraction of the file read so far in [0, 1]; negative when unknown (stdin, pipes).
  double Progress() const;
  // Called each time a followed file has no new line yet (e.g. to flush a partial batch).
  void set_on_idle(std::function<void()> on_idle) { on_idle_ = std::move(on_idle); }

 private:
  std::FILE* file_ = nullptr;
  bool owns_file_ = false;
  bool follow_ = false;
  const std::atomic<bool>* stop_ = nullptr;
  std::string display_name_;
  std::string pending_;  // partial last line while following
  int64_t line_number_ = 0;
  int64_t size_ = -1;
  std::function<void()> on_idle_;
};

}  // namespace bayline::cli
