// InputError: the one exception the CLI's readers throw for bad user input. Its message always
// names where the problem is: "<file>:<line>: column <n> (<name>): <problem>" (column part omitted
// when the problem is not in one column). Commands catch it, print it and exit with status 1;
// nothing is sent or written for the offending record.
#pragma once

#include <cstdint>
#include <stdexcept>
#include <string>

namespace bayline::cli {

class InputError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

// "<file>:<line>: <problem>"
[[noreturn]] void ThrowAtLine(const std::string& file, int64_t line, const std::string& problem);
// "<file>:<line>: column <column> (<name>): <problem>"; column is 1-based, 0 = unknown.
[[noreturn]] void ThrowAtColumn(const std::string& file, int64_t line, int column,
                                const std::string& name, const std::string& problem);

}  // namespace bayline::cli
