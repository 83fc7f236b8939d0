#pragma once
// The refusals a CSV record can meet whoever parses it: the record reader
// (src/io/csv.cpp) and apply's block parser (src/io/apply_stream.cpp) must
// word them alike, so that a message does not depend on the path taken.
#include <cstddef>
#include <cstdint>
#include <string>

#include "plumb/error.hpp"

namespace plumb::io {

// A record of `fields` fields under a header of `header_fields`.
Error ragged_row(const std::string& file, std::uint64_t line, std::size_t fields, std::size_t header_fields);
// A NUL byte in the 1-based `column` of the record starting on `line`.
Error nul_byte(const std::string& file, std::uint64_t line, std::size_t column);

}  // namespace plumb::io
