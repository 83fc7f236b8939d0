#include "plumb/error.hpp"

#include <string>

namespace plumb {
namespace {

// Length of the well-formed UTF-8 sequence at text[i] (RFC 3629, section 4:
// no overlong forms, no surrogates, nothing above U+10FFFF), or 0.
std::size_t utf8_sequence(const std::string& text, std::size_t i) {
  const auto at = [&](std::size_t k) { return static_cast<unsigned char>(text[k]); };
  const unsigned char c = at(i);
  std::size_t n = 0;
  unsigned char lo = 0x80, hi = 0xBF;  // range of the second byte
  if (c >= 0xC2 && c <= 0xDF) n = 2;
  else if (c == 0xE0) n = 3, lo = 0xA0;
  else if (c == 0xED) n = 3, hi = 0x9F;
  else if (c >= 0xE1 && c <= 0xEF) n = 3;
  else if (c == 0xF0) n = 4, lo = 0x90;
  else if (c >= 0xF1 && c <= 0xF3) n = 4;
  else if (c == 0xF4) n = 4, hi = 0x8F;
  else return 0;
  if (i + n > text.size() || at(i + 1) < lo || at(i + 1) > hi) return 0;
  for (std::size_t k = 2; k < n; ++k)
    if (at(i + k) < 0x80 || at(i + k) > 0xBF) return 0;
  return n;
}

// Control characters and bytes that are not UTF-8 as \xNN, so that a
// message stays one line of valid text whatever the input held (a quoted
// column name may contain a line break; a label may be in another encoding).
std::string escaped(const std::string& text, std::size_t limit = std::string::npos) {
  static const char* hex = "0123456789abcdef";
  std::string shown;
  for (std::size_t i = 0; i < text.size();) {
    if (shown.size() >= limit) {
      shown += "...";
      break;
    }
    const unsigned char c = static_cast<unsigned char>(text[i]);
    if (c >= 0x80) {
      if (const std::size_t n = utf8_sequence(text, i)) {
        shown.append(text, i, n);
        i += n;
        continue;
      }
    }
    if (c < 0x20 || c >= 0x7f) {
      shown += "\\x";
      shown += hex[c >> 4];
      shown += hex[c & 15];
    } else {
      shown += static_cast<char>(c);
    }
    ++i;
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
