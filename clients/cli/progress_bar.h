// ProgressBar: "replay data.csv  42% [########          ] 123456 rows" on stderr, redrawn in
// place at most 5 times a second, only when stderr is a terminal and the input is a regular file
// large enough to take a while (otherwise it prints nothing).
#pragma once

#include <chrono>
#include <cstdint>
#include <string>

namespace bayline::cli {

class ProgressBar {
 public:
  explicit ProgressBar(std::string label);
  // fraction in [0, 1], negative when unknown (then nothing is drawn).
  void Update(double fraction, uint64_t rows);
  void Finish(uint64_t rows);

 private:
  std::string label_;
  bool enabled_;
  bool drawn_ = false;
  std::chrono::steady_clock::time_point start_, next_;
};

}  // namespace bayline::cli
