// RecordReader: Records from a CSV file with a header row or from a JSON Lines file (one flat
// object per line), from a path or standard input ("-"), optionally following a growing file.
//
// Format: kAuto picks JSON Lines for names ending in .jsonl / .ndjson / .json, CSV for other
// names, and for stdin looks at the first non-blank line ('{' = JSON Lines).
// CSV: the first non-blank line is the header (column names, unique, non-empty); every later
// non-blank line must have exactly as many fields. Empty cells are absent values. Lines starting
// with '#' are comments in both formats.
// Errors (InputError) name the file, the line and, where it applies, the column.
#pragma once

#include <atomic>
#include <memory>
#include <string>
#include <vector>

#include "clients/cli/line_source.h"
#include "clients/cli/record.h"

namespace bayline::cli {

enum class InputFormat { kAuto, kCsv, kJsonLines };

// "csv", "jsonl" or "auto" to the enum; throws InputError for anything else.
InputFormat ParseInputFormat(const std::string& name);

class RecordReader {
 public:
  RecordReader(const std::string& path, InputFormat format, bool follow = false,
               const std::atomic<bool>* stop = nullptr);

  // Next record; false at the end of the input. Throws InputError on malformed input.
  bool Next(Record* out);

  // CSV column names (read on the first Next() or by this call); empty for JSON Lines.
  const std::vector<std::string>& header();
  bool is_csv();
  const std::string& display_name() const { return lines_.display_name(); }
  double Progress() const { return lines_.Progress(); }
  void set_on_idle(std::function<void()> on_idle) { lines_.set_on_idle(std::move(on_idle)); }

 private:
  bool NextContentLine(std::string* line);
  void ResolveFormat();
  void ReadHeader();

  LineSource lines_;
  InputFormat format_;
  bool header_read_ = false;
  std::vector<std::string> header_;
  std::string first_line_;  // content line read ahead while detecting the format
  bool have_first_line_ = false;
  std::vector<std::string> split_;
};

}  // namespace bayline::cli
