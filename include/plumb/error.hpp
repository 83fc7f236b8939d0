#pragma once
// The one error type of plumb: what went wrong, where, and what was expected.
#include <cstdint>
#include <stdexcept>
#include <string>

namespace plumb {

// Each category maps to one documented process exit code (docs/cli.md).
enum class ErrorKind : std::uint8_t {
  internal = 1,  // a bug in plumb
  usage = 2,     // bad command-line options
  input = 3,     // bad rows, columns or values in a data file
  artifact = 4,  // a map artifact that is truncated, tampered, or of an unknown version
  io = 5,        // a file that cannot be opened, read or written
  fit = 6,       // data that cannot support the requested fit (one class, no rows)
  threshold = 7, // a report gate (--max or --min) failed (the report is still written)
};

// Where an error was found. Line numbers are 1-based physical lines of the
// file (the header is line 1); column is 1-based; 0 means "not known".
struct Location {
  std::string file;
  std::uint64_t line = 0;
  std::uint64_t column = 0;
  std::string column_name;
};

class Error : public std::runtime_error {
 public:
  // `message` says what went wrong in a few words; `value` is the offending
  // text (may be empty); `expected` says what would have been accepted.
  Error(ErrorKind kind, std::string message, Location where = {}, std::string value = {},
        std::string expected = {});

  ErrorKind kind() const noexcept { return kind_; }
  const Location& where() const noexcept { return where_; }
  const std::string& message() const noexcept { return message_; }
  const std::string& value() const noexcept { return value_; }
  const std::string& expected() const noexcept { return expected_; }
  int exit_code() const noexcept { return static_cast<int>(kind_); }

 private:
  ErrorKind kind_;
  Location where_;
  std::string message_;
  std::string value_;
  std::string expected_;
};

// One line, no trailing newline: "FILE:LINE:COL (column 'NAME'): MESSAGE: got 'VALUE'; expected EXPECTED".
std::string format_error(const Error& e);

}  // namespace plumb
