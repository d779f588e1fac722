// Record: one row of input (a CSV row or a JSON Lines object), as named cells, before any column
// mapping. Numbers are kept as the text that was written so that integer columns (seq, time in ns)
// convert exactly.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

namespace bayline::cli {

struct Cell {
  enum class Kind { kText, kNumber, kBool, kNull, kList };
  Kind kind = Kind::kText;
  std::string text;                // kText: the string; kNumber / kBool: the token as written
  std::vector<std::string> items;  // kList: number tokens, in order
};

struct Field {
  std::string name;
  int column = 0;  // 1-based position in the row (CSV column, or JSON key order)
  Cell value;
};

struct Record {
  int64_t line = 0;  // 1-based physical line number in the input
  std::vector<Field> fields;

  // The field called `name`, or nullptr.
  const Field* Find(std::string_view name) const {
    for (const Field& f : fields) {
      if (f.name == name) return &f;
    }
    return nullptr;
  }
};

}  // namespace bayline::cli
