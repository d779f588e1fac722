#include "clients/cli/text_format.h"

#include <cmath>
#include <cstdio>
#include <ctime>

namespace bayline::cli {

size_t DisplayWidth(const std::string& s) {
  size_t width = 0;
  for (unsigned char c : s) {
    if ((c & 0xC0) != 0x80) ++width;
  }
  return width;
}

std::vector<std::string> AlignColumns(const std::vector<std::vector<std::string>>& rows) {
  std::vector<size_t> widths;
  for (const auto& row : rows) {
    if (row.size() > widths.size()) widths.resize(row.size(), 0);
    for (size_t c = 0; c < row.size(); ++c) {
      widths[c] = std::max(widths[c], DisplayWidth(row[c]));
    }
  }
  std::vector<std::string> lines;
  for (const auto& row : rows) {
    std::string line;
    for (size_t c = 0; c < row.size(); ++c) {
      line += row[c];
      if (c + 1 < row.size()) line += std::string(widths[c] - DisplayWidth(row[c]) + 2, ' ');
    }
    while (!line.empty() && line.back() == ' ') line.pop_back();
    lines.push_back(std::move(line));
  }
  return lines;
}

std::string FormatNumber(double value) {
  if (std::isnan(value)) return "nan";
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.5g", value);
  return buffer;
}

std::string FormatTimeNs(int64_t time_ns) {
  if (time_ns == 0) return "-";
  std::time_t seconds = static_cast<std::time_t>(time_ns / 1000000000);
  int millis = static_cast<int>((time_ns % 1000000000) / 1000000);
  std::tm tm{};
  gmtime_r(&seconds, &tm);
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, "%04d-%02d-%02dT%02d:%02d:%02d.%03dZ", tm.tm_year + 1900,
                tm.tm_mon + 1, tm.tm_mday, tm.tm_hour, tm.tm_min, tm.tm_sec, millis);
  return buffer;
}

}  // namespace bayline::cli
