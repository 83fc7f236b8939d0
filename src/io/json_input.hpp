#pragma once
// Helpers for JSON documents read from outside (map artifacts, tallies).
#include <cstddef>
#include <string>

#include "plumb/error.hpp"

namespace plumb::io {

// nlohmann::json parses, copies and destroys values recursively, so a
// hostile document of deeply nested brackets would overflow the stack.
// plumb's own documents nest three levels deep.
constexpr int max_json_nesting = 64;

// Whether `text` opens more than `limit` arrays or objects inside one
// another (brackets inside strings do not count). Linear, no allocation.
bool json_nested_deeper_than(const std::string& text, int limit = max_json_nesting) noexcept;

// The 1-based line and column of the byte before `byte` (a parser's
// error offset, which counts from 1), set in `loc`.
void locate_byte(const std::string& text, std::size_t byte, Location& loc) noexcept;

}  // namespace plumb::io
