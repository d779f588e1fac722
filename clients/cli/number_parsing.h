// Strict text-to-number conversions for input cells. Each returns nullopt unless the whole text
// (surrounding blanks allowed) is one number of the requested kind; callers turn nullopt into an
// InputError naming the cell.
#pragma once

#include <cstdint>
#include <optional>
#include <string_view>

namespace bayline::cli {

// A finite decimal or scientific number ("1.5", "-2e-3"). "nan", "inf" and hex are refused.
std::optional<double> ParseFiniteDouble(std::string_view text);

// A non-negative integer below 2^64 ("17"; "17.0" and "1e3" are accepted when exact).
std::optional<uint64_t> ParseUnsigned(std::string_view text);

// A signed integer ("-5", "1733130000000000000"); exact decimal forms like "12.0" accepted.
std::optional<int64_t> ParseSigned(std::string_view text);

// Seconds since the Unix epoch as decimal text ("1733130000.123456789") to nanoseconds, exactly
// (no rounding through double for plain decimals; scientific notation goes through double).
std::optional<int64_t> ParseSecondsToNanos(std::string_view text);

}  // namespace bayline::cli
