#pragma once
// Raw bytes from a file or standard input, hashed (SHA-256) as they pass.
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

class ByteSource {
 public:
  // "-" or empty: standard input. Throws plumb::Error(io) if the file cannot be opened.
  explicit ByteSource(const std::string& path);
  ~ByteSource();
  ByteSource(const ByteSource&) = delete;
  ByteSource& operator=(const ByteSource&) = delete;

  // Up to `size` bytes into `out`; 0 at the end. Throws plumb::Error(io) on a read error.
  std::size_t read(char* out, std::size_t size);
  std::uint64_t bytes_read() const noexcept { return bytes_read_; }
  std::optional<std::uint64_t> total_bytes() const noexcept { return total_; }
  std::string sha256_hex() const { return hash_.hex(); }
  const std::string& name() const noexcept { return name_; }

 private:
  int fd_ = -1;
  bool owns_fd_ = false;
  std::string name_;
  std::uint64_t bytes_read_ = 0;
  std::optional<std::uint64_t> total_;
  Sha256 hash_;
};

}  // namespace plumb::io
