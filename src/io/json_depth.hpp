#pragma once
// A guard for JSON read from outside: nlohmann::json parses, copies and
// destroys values recursively, so a hostile document of deeply nested
// brackets would overflow the stack. plumb's own documents (map artifacts,
// tallies) nest three levels deep.
#include <string>

namespace plumb::io {

constexpr int max_json_nesting = 64;

// Whether `text` opens more than `limit` arrays or objects inside one
// another (brackets inside strings do not count). Linear, no allocation.
bool json_nested_deeper_than(const std::string& text, int limit = max_json_nesting) noexcept;

}  // namespace plumb::io
