#include "plumb/error.hpp"

#include <string>

namespace plumb {
namespace {

std::string render(const Location& where, const std::string& message, const std::string& value,
                   const std::string& expected) {
  std::string out;
  if (!where.file.empty()) {
    out += where.file;
    if (where.line > 0) out += ":" + std::to_string(where.line);
    if (where.column > 0) out += ":" + std::to_string(where.column);
  }
  if (!where.column_name.empty()) {
    out += out.empty() ? "" : " ";
    out += "(column '" + where.column_name + "')";
  }
  if (!out.empty()) out += ": ";
  out += message;
  if (!value.empty()) {
    // Keep the line readable: long or binary values are cut and escaped.
    std::string shown;
    for (unsigned char c : value) {
      if (shown.size() >= 60) {
        shown += "...";
        break;
      }
      if (c < 0x20 || c == 0x7f) {
        static const char* hex = "0123456789abcdef";
        shown += "\\x";
        shown += hex[c >> 4];
        shown += hex[c & 15];
      } else {
        shown += static_cast<char>(c);
      }
    }
    out += ": got '" + shown + "'";
  }
  if (!expected.empty()) out += "; expected " + expected;
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
