#pragma once
// The tally file: a Tally as one JSON document (docs/tally-format.md,
// docs/tally.schema.json).
#include <string>

#include "plumb/tally.hpp"

namespace plumb::io {
class OutputFile;
}

namespace plumb {

// The whole document. Deterministic: the same tally gives the same bytes;
// every double is written in the shortest form that reads back to it.
// Throws plumb::Error(input) when a file or column name is not UTF-8.
std::string tally_to_text(const Tally& tally);

// The same bytes written to `out` piece by piece, without holding the whole
// text (memory of a tally of 10^6 scores: its numbers, not their text).
// Every name is checked before the first byte is written.
void write_tally(const Tally& tally, io::OutputFile& out);

// Parse and validate a document; `where` names it in messages. The checks
// run in a fixed order whatever the order of the fields (a field given
// twice: the last counts); the refusal of text that is not JSON carries the
// line and column of nlohmann's parser's error offset. Refuses with
// plumb::Error(artifact), naming the field: text that is not JSON (with line
// and column), another format, an unknown format version, missing or
// mistyped fields, non-finite or negative numbers, scores outside their
// scale or not strictly ascending, arrays of different lengths, counts that
// do not add up, and a grid on the margin scale.
Tally tally_from_text(const std::string& text, const std::string& where);

// Read a file ("-" for standard input, gzip or not) and parse it as above,
// streaming: the bytes pass 64 KiB at a time and the per-score arrays are
// kept as numbers only, so memory is that of the Tally, not of the text or
// of a JSON tree. `sha256` (if given) receives the SHA-256 of its bytes.
// plumb::Error(io) if it cannot be read, (artifact) if it is empty.
Tally load_tally(const std::string& path, std::string* sha256 = nullptr);

}  // namespace plumb
