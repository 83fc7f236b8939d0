#include "plumb/error.hpp"

#include <string>

namespace plumb {
namespace {

// Control characters as \xNN so that a message stays one line whatever the
// input held (a quoted column name may contain a line break).
std::string escaped(const std::string& text, std::size_t limit = std::string::npos) {
  static const char* hex = "0123456789abcdef";
  std::string shown;
  for (unsigned char c : text) {
    if (shown.size() >= limit) {
      shown += "...";
      break;
    }
    if (c < 0x20 || c == 0x7f) {
      shown += "\\x";
      shown += hex[c >> 4];
      shown += hex[c & 15];
    } else {
      shown += static_cast<char>(c);
    }
  }
  return shown;
}

std::string render(const Location& where, const std::string& message, const std::string& value,
                   const std::string& expected) {
  std::string out;
  if (!where.file.empty()) {
    out += escaped(where.file);
    if (where.line > 0) out += ":" + std::to_string(where.line);
    if (where.column > 0) out += ":" + std::to_string(where.column);
  }
  if (!where.column_name.empty()) {
    out += out.empty() ? "" : " ";
    out += "(column '" + escaped(where.column_name) + "')";
  }
  if (!out.empty()) out += ": ";
  out += escaped(message);
  // Keep the line readable: long or binary values are cut and escaped.
  if (!value.empty()) out += ": got '" + escaped(value, 60) + "'";
  if (!expected.empty()) out += "; expected " + escaped(expected);
  return out;
}

}  // namespace

Error::Error(ErrorKind kind, std::string message, Location where, std::string value,
             std::string expected)
    : std::runtime_error(render(where, message, value, expected)),
      kind_(kind),
      where_(std::move(where)),
      message_(std::move(message)),
      value_(std::move(value)),
      expected_(std::move(expected)) {}

std::string format_error(const Error& e) { return e.what(); }

}  // namespace plumb
