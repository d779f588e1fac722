#include "clients/cli/progress_bar.h"

#include <unistd.h>

#include <cstdio>

namespace bayline::cli {

ProgressBar::ProgressBar(std::string label)
    : label_(std::move(label)), enabled_(isatty(STDERR_FILENO) != 0) {
  start_ = std::chrono::steady_clock::now();
  // Small inputs finish before the first redraw would be due: they never show a bar.
  next_ = start_ + std::chrono::milliseconds(500);
}

void ProgressBar::Update(double fraction, uint64_t rows) {
  if (!enabled_ || fraction < 0) return;
  auto now = std::chrono::steady_clock::now();
  if (now < next_) return;
  next_ = now + std::chrono::milliseconds(200);
  constexpr int kWidth = 30;
  int filled = static_cast<int>(fraction * kWidth);
  std::string bar(static_cast<size_t>(filled), '#');
  bar.resize(kWidth, ' ');
  std::fprintf(stderr, "\r%s %3d%% [%s] %llu rows\x1b[K", label_.c_str(),
               static_cast<int>(fraction * 100), bar.c_str(),
               static_cast<unsigned long long>(rows));
  std::fflush(stderr);
  drawn_ = true;
}

void ProgressBar::Finish(uint64_t rows) {
  if (!drawn_) return;
  std::fprintf(stderr, "\r%s 100%% done, %llu rows\x1b[K\n", label_.c_str(),
               static_cast<unsigned long long>(rows));
}

}  // namespace bayline::cli
