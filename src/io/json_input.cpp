#include "io/json_input.hpp"

namespace plumb::io {

bool json_nested_deeper_than(const std::string& text, int limit) noexcept {
  int depth = 0;
  bool in_string = false;
  for (std::size_t i = 0; i < text.size(); ++i) {
    const char c = text[i];
    if (in_string) {
      if (c == '\\') ++i;
      else if (c == '"') in_string = false;
    } else if (c == '"') {
      in_string = true;
    } else if (c == '[' || c == '{') {
      if (++depth > limit) return true;
    } else if (c == ']' || c == '}') {
      --depth;
    }
  }
  return false;
}

void locate_byte(const std::string& text, std::size_t byte, Location& loc) noexcept {
  loc.line = 1;
  loc.column = 1;
  const std::size_t stop = byte > 0 ? (byte - 1 < text.size() ? byte - 1 : text.size()) : 0;
  for (std::size_t i = 0; i < stop; ++i) {
    if (text[i] == '\n') {
      ++loc.line;
      loc.column = 1;
    } else {
      ++loc.column;
    }
  }
}

}  // namespace plumb::io
