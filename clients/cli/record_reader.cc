#include "clients/cli/record_reader.h"

#include <set>

#include "clients/cli/csv_line.h"
#include "clients/cli/input_error.h"
#include "clients/cli/json_object.h"

namespace bayline::cli {
namespace {

bool EndsWith(const std::string& s, const std::string& suffix) {
  return s.size() >= suffix.size() &&
         s.compare(s.size() - suffix.size(), suffix.size(), suffix) == 0;
}

bool IsBlankOrComment(const std::string& line) {
  size_t i = line.find_first_not_of(" \t\r");
  return i == std::string::npos || line[i] == '#';
}

}  // namespace

InputFormat ParseInputFormat(const std::string& name) {
  if (name == "auto") return InputFormat::kAuto;
  if (name == "csv") return InputFormat::kCsv;
  if (name == "jsonl") return InputFormat::kJsonLines;
  throw InputError("unknown input format '" + name + "' (expected csv, jsonl or auto)");
}

RecordReader::RecordReader(const std::string& path, InputFormat format, bool follow,
                           const std::atomic<bool>* stop)
    : lines_(path, follow, stop), format_(format) {
  if (format_ == InputFormat::kAuto && path != "-") {
    format_ = EndsWith(path, ".jsonl") || EndsWith(path, ".ndjson") || EndsWith(path, ".json")
                  ? InputFormat::kJsonLines
                  : InputFormat::kCsv;
  }
}

bool RecordReader::NextContentLine(std::string* line) {
  if (have_first_line_) {
    have_first_line_ = false;
    *line = std::move(first_line_);
    return true;
  }
  while (lines_.Next(line)) {
    if (!IsBlankOrComment(*line)) return true;
  }
  return false;
}

void RecordReader::ResolveFormat() {
  if (format_ != InputFormat::kAuto) return;
  if (!NextContentLine(&first_line_)) {
    format_ = InputFormat::kCsv;
    return;
  }
  have_first_line_ = true;
  size_t i = first_line_.find_first_not_of(" \t");
  format_ = first_line_[i] == '{' ? InputFormat::kJsonLines : InputFormat::kCsv;
}

bool RecordReader::is_csv() {
  ResolveFormat();
  return format_ == InputFormat::kCsv;
}

void RecordReader::ReadHeader() {
  header_read_ = true;
  if (!is_csv()) return;
  std::string line;
  if (!NextContentLine(&line)) return;  // empty file: no header, no records
  if (auto error = SplitCsvLine(line, ',', &header_)) {
    ThrowAtLine(display_name(), lines_.line_number(), "header: " + *error);
  }
  std::set<std::string> seen;
  for (size_t c = 0; c < header_.size(); ++c) {
    if (header_[c].empty()) {
      ThrowAtColumn(display_name(), lines_.line_number(), static_cast<int>(c + 1), "",
                    "empty column name in the header");
    }
    if (!seen.insert(header_[c]).second) {
      ThrowAtColumn(display_name(), lines_.line_number(), static_cast<int>(c + 1), header_[c],
                    "duplicate column name in the header");
    }
  }
}

const std::vector<std::string>& RecordReader::header() {
  if (!header_read_) ReadHeader();
  return header_;
}

bool RecordReader::Next(Record* out) {
  if (!header_read_) ReadHeader();
  std::string line;
  if (!NextContentLine(&line)) return false;
  out->line = lines_.line_number();
  if (format_ == InputFormat::kJsonLines) {
    if (auto error = ParseJsonObjectLine(line, out)) {
      ThrowAtLine(display_name(), out->line, "not a JSON object: " + *error);
    }
    return true;
  }
  if (auto error = SplitCsvLine(line, ',', &split_)) {
    ThrowAtLine(display_name(), out->line, *error);
  }
  if (split_.size() != header_.size()) {
    if (split_.size() > header_.size()) {
      ThrowAtColumn(display_name(), out->line, static_cast<int>(header_.size() + 1), "no header",
                    "ragged row: " + std::to_string(split_.size()) + " fields but the header has " +
                        std::to_string(header_.size()) + " columns");
    }
    size_t missing = split_.size();
    ThrowAtColumn(display_name(), out->line, static_cast<int>(missing + 1), header_[missing],
                  "ragged row: " + std::to_string(split_.size()) + " fields but the header has " +
                      std::to_string(header_.size()) + " columns");
  }
  out->fields.resize(header_.size());
  for (size_t c = 0; c < header_.size(); ++c) {
    Field& f = out->fields[c];
    f.name = header_[c];
    f.column = static_cast<int>(c + 1);
    f.value.items.clear();
    f.value.text = std::move(split_[c]);
    f.value.kind = f.value.text.empty() ? Cell::Kind::kNull : Cell::Kind::kText;
  }
  return true;
}

}  // namespace bayline::cli
