#include "plumb/io/output.hpp"

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>
#include <cstdlib>
#include <cstring>
#include <filesystem>

#include <zlib.h>

#include "plumb/error.hpp"

namespace plumb::io {
namespace {

[[noreturn]] void io_error(const std::string& file, const std::string& what) {
  Location loc;
  loc.file = file;
  throw Error(ErrorKind::io, what + ": " + std::strerror(errno), loc);
}

bool ends_with_gz(const std::string& path) { return path.size() > 3 && path.compare(path.size() - 3, 3, ".gz") == 0; }

}  // namespace

// zlib's deflate state for a .gz output, and the compressed bytes it makes.
struct OutputFile::Gzip {
  z_stream z{};
  std::vector<unsigned char> out = std::vector<unsigned char>(std::size_t{1} << 18);
  Gzip() {
    // windowBits 15 + 16: a gzip wrapper with zlib's default header (no name,
    // modification time 0), so the file depends on the bytes alone.
    if (deflateInit2(&z, 6, Z_DEFLATED, 15 + 16, 8, Z_DEFAULT_STRATEGY) != Z_OK)
      throw Error(ErrorKind::internal, "cannot initialise zlib");
  }
  ~Gzip() { deflateEnd(&z); }
  Gzip(const Gzip&) = delete;
  Gzip& operator=(const Gzip&) = delete;
};

OutputFile::OutputFile(const std::string& path, std::size_t buffer_bytes) : capacity_(buffer_bytes) {
  buffer_.reserve(capacity_);
  if (path.empty() || path == "-") {
    name_ = "<stdout>";
    fd_ = STDOUT_FILENO;
    return;
  }
  name_ = path;
  struct stat st {};
  if (::stat(path.c_str(), &st) == 0 && !S_ISREG(st.st_mode) && !S_ISDIR(st.st_mode)) {
    // A device or a named pipe (-o /dev/null, -o a FIFO) is written in place:
    // renaming a temporary file over it would replace it with a regular file.
    fd_ = ::open(path.c_str(), O_WRONLY | O_CLOEXEC);
    if (fd_ < 0) io_error(path, "cannot open");
    if (ends_with_gz(path)) gzip_ = std::make_unique<Gzip>();
    return;
  }
  const std::filesystem::path target(path);
  const std::filesystem::path dir = target.has_parent_path() ? target.parent_path() : std::filesystem::path(".");
  // A hidden name beside the target, so that rename() stays on one file system.
  std::string tmpl = (dir / ("." + target.filename().string() + ".plumb-XXXXXX")).string();
  fd_ = ::mkstemp(tmpl.data());
  if (fd_ < 0) io_error(path, "cannot create a temporary file beside the output");
  temp_path_ = tmpl;
  if (ends_with_gz(path)) gzip_ = std::make_unique<Gzip>();
  // mkstemp creates 0600; give the result the usual permissions under the umask.
  const mode_t mask = ::umask(0);
  ::umask(mask);
  ::fchmod(fd_, 0666 & ~mask);
}

OutputFile::~OutputFile() {
  if (fd_ >= 0 && fd_ != STDOUT_FILENO) ::close(fd_);
  if (!committed_ && !temp_path_.empty()) ::unlink(temp_path_.c_str());
}

void OutputFile::write_through(std::string_view bytes) {
  const char* p = bytes.data();
  std::size_t left = bytes.size();
  while (left > 0) {
    const ssize_t n = ::write(fd_, p, left);
    if (n < 0) {
      if (errno == EINTR) continue;
      io_error(name_, "cannot write");
    }
    p += n;
    left -= static_cast<std::size_t>(n);
  }
}

void OutputFile::write_bytes(std::string_view bytes) {
  if (!gzip_) {
    write_through(bytes);
    return;
  }
  z_stream& z = gzip_->z;
  z.next_in = reinterpret_cast<Bytef*>(const_cast<char*>(bytes.data()));
  z.avail_in = static_cast<uInt>(bytes.size());
  do {
    z.next_out = gzip_->out.data();
    z.avail_out = static_cast<uInt>(gzip_->out.size());
    if (deflate(&z, Z_NO_FLUSH) == Z_STREAM_ERROR) throw Error(ErrorKind::internal, "zlib refused to compress");
    write_through(std::string_view(reinterpret_cast<const char*>(gzip_->out.data()), gzip_->out.size() - z.avail_out));
  } while (z.avail_in > 0 || z.avail_out == 0);
}

void OutputFile::write_slow(std::string_view bytes) {
  if (gzip_) {
    // Compressed output is fed to zlib in whole buffers only, so that the
    // compressed bytes never depend on how the caller cut its writes.
    while (buffer_.size() + bytes.size() > capacity_) {
      const std::size_t take = capacity_ - buffer_.size();
      buffer_.insert(buffer_.end(), bytes.begin(), bytes.begin() + static_cast<std::ptrdiff_t>(take));
      bytes.remove_prefix(take);
      flush_buffer();
    }
    buffer_.insert(buffer_.end(), bytes.begin(), bytes.end());
    return;
  }
  flush_buffer();
  if (bytes.size() > capacity_) {
    write_through(bytes);
    return;
  }
  buffer_.insert(buffer_.end(), bytes.begin(), bytes.end());
}

void OutputFile::flush_buffer() {
  if (buffer_.empty()) return;
  write_bytes(std::string_view(buffer_.data(), buffer_.size()));
  buffer_.clear();
}

void OutputFile::commit() {
  flush_buffer();
  if (gzip_) {
    z_stream& z = gzip_->z;
    z.next_in = nullptr;
    z.avail_in = 0;
    int rc = Z_OK;
    while (rc != Z_STREAM_END) {
      z.next_out = gzip_->out.data();
      z.avail_out = static_cast<uInt>(gzip_->out.size());
      rc = deflate(&z, Z_FINISH);
      if (rc == Z_STREAM_ERROR) throw Error(ErrorKind::internal, "zlib refused to compress");
      write_through(
          std::string_view(reinterpret_cast<const char*>(gzip_->out.data()), gzip_->out.size() - z.avail_out));
    }
    gzip_.reset();
  }
  if (temp_path_.empty()) {  // standard output, a device or a named pipe
    if (fd_ != STDOUT_FILENO) {
      const int fd = fd_;
      fd_ = -1;
      if (::close(fd) != 0) io_error(name_, "cannot write");
    }
    committed_ = true;
    return;
  }
  if (::fsync(fd_) != 0) io_error(name_, "cannot write");
  if (::close(fd_) != 0) {
    fd_ = -1;
    io_error(name_, "cannot write");
  }
  fd_ = -1;
  if (::rename(temp_path_.c_str(), name_.c_str()) != 0) io_error(name_, "cannot move the finished output into place");
  committed_ = true;
}

}  // namespace plumb::io
