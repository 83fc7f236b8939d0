#pragma once
// Shared pieces of the fuzz targets: invariant checks that abort (so that
// libFuzzer, or the replay driver in the ordinary test build, reports the
// input), and ways to hand bytes to readers that only take a path.
#include <fcntl.h>
#include <sys/mman.h>
#include <unistd.h>

#include <cerrno>
#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <exception>
#include <string>
#include <string_view>
#include <vector>

#include "plumb/error.hpp"

namespace plumb::fuzz {

[[noreturn]] inline void invariant_failed(const char* file, int line, const char* condition, const std::string& detail) {
  std::fprintf(stderr, "%s:%d: invariant failed: %s\n  %s\n", file, line, condition, detail.c_str());
  std::abort();
}

// Escapes bytes for a failure message.
inline std::string shown(std::string_view s) {
  std::string out = "'";
  for (unsigned char c : s) {
    if (c < 0x20 || c >= 0x7f || c == '\'' || c == '\\') {
      static const char* hex = "0123456789abcdef";
      out += "\\x";
      out += hex[c >> 4];
      out += hex[c & 15];
    } else {
      out += static_cast<char>(c);
    }
  }
  return out + "'";
}

// Runs `body`; plumb::Error is the one exception the library may let
// escape, anything else is a bug. Returns whether `body` finished without
// an error.
template <class Body>
bool only_plumb_errors(Body&& body, plumb::Error* caught = nullptr) {
  try {
    body();
    return true;
  } catch (const plumb::Error& e) {
    if (caught) *caught = e;
    return false;
  } catch (const std::exception& e) {
    invariant_failed(__FILE__, __LINE__, "only plumb::Error escapes",
                     std::string("an exception of another type escaped: ") + e.what());
  } catch (...) {
    invariant_failed(__FILE__, __LINE__, "only plumb::Error escapes", "a non-standard exception escaped");
  }
}

// The bytes as an anonymous in-memory file, readable through path().
class MemoryFile {
 public:
  explicit MemoryFile(std::string_view bytes) {
    fd_ = ::memfd_create("fuzz-input", MFD_CLOEXEC);
    if (fd_ < 0) std::abort();
    std::size_t done = 0;
    while (done < bytes.size()) {
      const ssize_t n = ::write(fd_, bytes.data() + done, bytes.size() - done);
      if (n < 0 && errno == EINTR) continue;
      if (n <= 0) std::abort();
      done += static_cast<std::size_t>(n);
    }
  }
  ~MemoryFile() { ::close(fd_); }
  MemoryFile(const MemoryFile&) = delete;
  MemoryFile& operator=(const MemoryFile&) = delete;
  std::string path() const { return "/proc/self/fd/" + std::to_string(fd_); }

 private:
  int fd_ = -1;
};

// The bytes as a pipe in packet mode (O_DIRECT, Linux 3.4+): every read()
// of the reading end returns exactly one of the chunks written, so a
// reader sees its input arrive in pieces at the places the fuzzer chose,
// as from a slow producer in a shell pipeline. ok() is false when the
// chunks do not fit the pipe's capacity (the caller then skips this way).
class ChunkedPipe {
 public:
  ChunkedPipe(std::string_view bytes, const std::vector<std::size_t>& chunk_sizes) {
    int fds[2];
    if (::pipe2(fds, O_CLOEXEC | O_DIRECT) != 0) return;
    read_fd_ = fds[0];
    const int write_fd = fds[1];
    ::fcntl(write_fd, F_SETPIPE_SZ, 1 << 20);
    ::fcntl(write_fd, F_SETFL, ::fcntl(write_fd, F_GETFL) | O_NONBLOCK);
    std::size_t done = 0;
    ok_ = true;
    for (std::size_t size : chunk_sizes) {
      if (done == bytes.size()) break;
      if (size > bytes.size() - done) size = bytes.size() - done;
      const ssize_t n = ::write(write_fd, bytes.data() + done, size);
      if (n != static_cast<ssize_t>(size)) {
        ok_ = false;
        break;
      }
      done += size;
    }
    if (done != bytes.size()) ok_ = false;
    ::close(write_fd);
  }
  ~ChunkedPipe() {
    if (read_fd_ >= 0) ::close(read_fd_);
  }
  ChunkedPipe(const ChunkedPipe&) = delete;
  ChunkedPipe& operator=(const ChunkedPipe&) = delete;
  bool ok() const { return ok_; }
  std::string path() const { return "/proc/self/fd/" + std::to_string(read_fd_); }

 private:
  int read_fd_ = -1;
  bool ok_ = false;
};

// Chunk sizes (each 1..4096, the size of one pipe packet) from a seed byte:
// a small deterministic generator, so that one input always gives the same
// pieces. At most `max_chunks` chunks; the last ones grow to cover `total`.
//
// A read() shorter than a packet drops the rest of the packet, which a
// real pipe never does, so every read must ask for at least a packet.
// io::ByteSource reads the first two bytes alone (to look for gzip's magic
// number): the first two pieces are one byte each; later reads ask for
// most of the CSV reader's buffer (1 MiB) or zlib's (256 KiB).
inline std::vector<std::size_t> chunk_plan(std::uint8_t seed, std::size_t total, std::size_t max_chunks = 200) {
  std::vector<std::size_t> sizes = {1, 1};
  std::uint32_t state = 0x9e3779b9u ^ (static_cast<std::uint32_t>(seed) * 0x85ebca6bu);
  const std::size_t largest = 1 + (seed & 0x3f);  // typical piece: 1..64 bytes
  const std::size_t floor_size = (total + max_chunks - 1) / max_chunks;
  std::size_t covered = 2;
  while (covered < total) {
    state = state * 1664525u + 1013904223u;
    std::size_t size = 1 + (state >> 8) % largest;
    if (size < floor_size) size = floor_size;
    if (size > 4096) size = 4096;
    sizes.push_back(size);
    covered += size;
  }
  return sizes;
}

}  // namespace plumb::fuzz

#define FUZZ_CHECK(condition, detail)                                                     \
  do {                                                                                    \
    if (!(condition)) ::plumb::fuzz::invariant_failed(__FILE__, __LINE__, #condition, (detail)); \
  } while (0)
