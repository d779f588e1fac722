#include "clients/cli/csv_line.h"

namespace bayline::cli {
namespace {

std::string TrimBlanks(std::string s) {
  size_t b = s.find_first_not_of(" \t");
  if (b == std::string::npos) return {};
  size_t e = s.find_last_not_of(" \t");
  return s.substr(b, e - b + 1);
}

}  // namespace

std::optional<std::string> SplitCsvLine(std::string_view line, char delimiter,
                                        std::vector<std::string>* fields) {
  fields->clear();
  if (!line.empty() && line.back() == '\r') line.remove_suffix(1);
  size_t i = 0;
  while (true) {
    std::string field;
    size_t start = i;
    while (i < line.size() && (line[i] == ' ' || line[i] == '\t')) ++i;
    if (i < line.size() && line[i] == '"') {
      ++i;
      bool closed = false;
      while (i < line.size()) {
        if (line[i] == '"') {
          if (i + 1 < line.size() && line[i + 1] == '"') {
            field += '"';
            i += 2;
            continue;
          }
          closed = true;
          ++i;
          break;
        }
        field += line[i++];
      }
      if (!closed) {
        return "unterminated quoted field at column " + std::to_string(fields->size() + 1);
      }
      while (i < line.size() && (line[i] == ' ' || line[i] == '\t')) ++i;
      if (i < line.size() && line[i] != delimiter) {
        return "text after the closing quote at column " + std::to_string(fields->size() + 1);
      }
      fields->push_back(std::move(field));
    } else {
      i = start;
      while (i < line.size() && line[i] != delimiter) field += line[i++];
      fields->push_back(TrimBlanks(std::move(field)));
    }
    if (i >= line.size()) break;
    ++i;  // skip the delimiter; a trailing delimiter yields one more empty field
    if (i == line.size()) {
      fields->emplace_back();
      break;
    }
  }
  return std::nullopt;
}

}  // namespace bayline::cli
