#pragma once
// The parts of reading a map artifact that binary and multi-class artifacts
// share (src/io/artifact.cpp).
#include <nlohmann/json.hpp>
#include <string>

namespace plumb::io {

// The bytes of the artifact at `path` ("-" for standard input; gzip
// decompressed), and the name messages use in `name` (may be null).
// Throws plumb::Error: io when it cannot be read, artifact when it is empty
// or larger than an artifact can be.
std::string artifact_text(const std::string& path, std::string* name);

// Parses `text` as a plumb map artifact and checks what every artifact
// holds: JSON within the nesting limit, the format marker, a format version
// this build reads (its "format_version" is then an integer), and the
// integrity hash. Throws plumb::Error(artifact) naming `where`.
nlohmann::json artifact_document(const std::string& text, const std::string& where);

}  // namespace plumb::io
