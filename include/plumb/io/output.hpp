#pragma once
// Buffered output that appears whole or not at all.
//
// A named file is written to a temporary file beside it and renamed over the
// target only by commit(); if the object is destroyed without commit() (an
// error, an exception), the temporary file is removed and any previous file
// at the target is left as it was. "-" writes to standard output.
//
// A name ending in ".gz" is written as one gzip member (RFC 1952) of the
// same bytes: compression level 6, no file name, modification time 0, so
// that the same bytes written always give the same file, however they were
// cut into write() calls. Standard output is never compressed.
#include <memory>
#include <string>
#include <string_view>
#include <vector>

namespace plumb::io {

class OutputFile {
 public:
  // Throws plumb::Error(io) when the temporary file cannot be created.
  explicit OutputFile(const std::string& path, std::size_t buffer_bytes = std::size_t{1} << 20);
  ~OutputFile();
  OutputFile(const OutputFile&) = delete;
  OutputFile& operator=(const OutputFile&) = delete;

  void write(std::string_view bytes) {
    if (buffer_.size() + bytes.size() > capacity_) {
      write_slow(bytes);
      return;
    }
    buffer_.insert(buffer_.end(), bytes.begin(), bytes.end());
  }
  void put(char c) {
    if (buffer_.size() == capacity_) flush_buffer();
    buffer_.push_back(c);
  }

  // Flush, sync and rename into place. Throws plumb::Error(io) on a write
  // error (a full disk), after removing the temporary file.
  void commit();

  const std::string& name() const noexcept { return name_; }
  bool is_stdout() const noexcept { return fd_ == 1; }
  bool is_gzip() const noexcept { return gzip_ != nullptr; }

 private:
  struct Gzip;
  void write_slow(std::string_view bytes);
  void flush_buffer();
  void write_through(std::string_view bytes);
  void write_bytes(std::string_view bytes);

  std::string name_;
  std::string temp_path_;
  int fd_ = -1;
  bool committed_ = false;
  std::size_t capacity_;
  std::vector<char> buffer_;
  std::unique_ptr<Gzip> gzip_;
};

}  // namespace plumb::io
