#pragma once
// Bytes from a file or standard input, hashed (SHA-256) as they pass and,
// when they are gzip data, decompressed.
#include <cstddef>
#include <cstdint>
#include <memory>
#include <optional>
#include <string>

namespace plumb::io {

class Sha256 {
 public:
  Sha256();
  ~Sha256();
  Sha256(const Sha256&) = delete;
  Sha256& operator=(const Sha256&) = delete;
  void update(const void* data, std::size_t size);
  // Lowercase hex digest of everything so far; the running hash is not reset.
  std::string hex() const;

 private:
  void* ctx_;
};

// One-shot SHA-256 as lowercase hex.
std::string sha256_hex(const std::string& bytes);

struct ByteSourceOptions {
  // Keep a SHA-256 of the bytes as stored (compressed bytes for gzip input,
  // so that the digest matches sha256sum of the file).
  bool hash = true;
  // Decompress gzip data, recognised by its first two bytes (1f 8b) whatever
  // the file is called; several concatenated gzip members read as one.
  bool decompress = false;
};

class ByteSource {
 public:
  // "-" or empty: standard input. Throws plumb::Error(io) if the file cannot
  // be opened or read.
  explicit ByteSource(const std::string& path, const ByteSourceOptions& options = {});
  ~ByteSource();
  ByteSource(const ByteSource&) = delete;
  ByteSource& operator=(const ByteSource&) = delete;

  // Up to `size` bytes into `out` (at least one unless at the end); 0 at the
  // end. Throws plumb::Error: io on a read error, input on corrupt or
  // truncated gzip data.
  std::size_t read(char* out, std::size_t size);
  // Bytes consumed from the file as stored, and its size when it is a
  // regular file (both count compressed bytes for gzip input).
  std::uint64_t bytes_read() const noexcept { return bytes_read_; }
  std::optional<std::uint64_t> total_bytes() const noexcept { return total_; }
  bool compressed() const noexcept { return inflater_ != nullptr; }
  std::string sha256_hex() const { return hash_.hex(); }
  const std::string& name() const noexcept { return name_; }

 private:
  std::size_t read_stored(char* out, std::size_t size);
  std::size_t inflate_into(char* out, std::size_t size);
  [[noreturn]] void fail_input(const std::string& message, const std::string& expected) const;

  int fd_ = -1;
  bool owns_fd_ = false;
  bool hashing_ = true;
  std::string name_;
  std::uint64_t bytes_read_ = 0;
  std::optional<std::uint64_t> total_;
  Sha256 hash_;
  // Stored bytes read ahead (to recognise gzip data) and not yet handed out.
  std::string ahead_;
  std::size_t ahead_pos_ = 0;
  struct Inflater;
  std::unique_ptr<Inflater> inflater_;
};

}  // namespace plumb::io
