#include "clients/cli/input_error.h"

namespace bayline::cli {

void ThrowAtLine(const std::string& file, int64_t line, const std::string& problem) {
  throw InputError(file + ":" + std::to_string(line) + ": " + problem);
}

void ThrowAtColumn(const std::string& file, int64_t line, int column, const std::string& name,
                   const std::string& problem) {
  std::string where = file + ":" + std::to_string(line) + ": column ";
  if (column > 0) {
    where += std::to_string(column) + " (" + name + ")";
  } else {
    where += "(" + name + ")";
  }
  throw InputError(where + ": " + problem);
}

}  // namespace bayline::cli
