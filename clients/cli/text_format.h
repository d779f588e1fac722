// Small text helpers for human-readable output: aligned tables, compact numbers, UTC times.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

namespace bayline::cli {

// Left-aligned columns separated by two spaces; the header row is followed by no rule line.
// Rows shorter than the header are padded with empty cells.
std::vector<std::string> AlignColumns(const std::vector<std::vector<std::string>>& rows);

// 5 significant digits, no trailing zeros ("1.0021", "0.0013457", "1.2346e+06"); "nan" for NaN.
std::string FormatNumber(double value);

// "2026-12-02T05:41:36.123Z" (UTC, milliseconds); "-" for 0 (absent).
std::string FormatTimeNs(int64_t time_ns);

// Display width of a UTF-8 string (code points; good enough for channel names).
size_t DisplayWidth(const std::string& s);

}  // namespace bayline::cli
