// LiveTable: the state `bayline follow` shows on a terminal, built from publications: one row per
// (channel, estimator) with its latest parameters and intervals, the channel's last alarm, and
// running counts. Render() lays it out in aligned columns cut to the terminal's size; Painter
// redraws it in place with ANSI cursor control only (no curses).
#pragma once

#include <cstdint>
#include <cstdio>
#include <map>
#include <string>
#include <utility>
#include <vector>

#include "bayline/v1/publication.pb.h"

namespace bayline::cli {

class LiveTable {
 public:
  void Absorb(const bayline::v1::Publication& publication);

  // Lines to show: a title line, the column header, rows sorted by channel then estimator, a
  // "... N more rows" line when they do not fit in `height`, and the last input error if any.
  // Lines are cut to `width` display columns.
  std::vector<std::string> Render(const std::string& title, int width, int height) const;

  uint64_t publications() const { return publications_; }

 private:
  std::map<std::pair<std::string, std::string>, bayline::v1::Estimate> estimates_;
  struct AlarmView {
    bayline::v1::Alarm raised;  // the channel's last raised alarm
    uint64_t cleared_seq = 0;   // seq where it cleared; 0 while it is active
  };
  std::map<std::string, AlarmView> alarms_by_channel_;
  std::string last_input_error_;
  std::string last_prediction_;
  uint64_t publications_ = 0, alarms_ = 0, input_errors_ = 0;
};

// Redraws a block of lines in place: moves the cursor back to the block's first line, rewrites
// each line (clearing its tail) and clears whatever the previous, longer block left below.
class Painter {
 public:
  explicit Painter(std::FILE* out) : out_(out) {}
  void Paint(const std::vector<std::string>& lines);

 private:
  std::FILE* out_;
  size_t painted_ = 0;
};

// The terminal's size (columns, rows) for `fd`; (120, 40) when it cannot be told.
std::pair<int, int> TerminalSize(int fd);

}  // namespace bayline::cli
