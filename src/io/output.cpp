#include "plumb/output.hpp"

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>
#include <cstdlib>
#include <cstring>
#include <filesystem>

#include "plumb/error.hpp"

namespace plumb::io {
namespace {

[[noreturn]] void io_error(const std::string& file, const std::string& what) {
  Location loc;
  loc.file = file;
  throw Error(ErrorKind::io, what + ": " + std::strerror(errno), loc);
}

}  // namespace

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
    return;
  }
  const std::filesystem::path target(path);
  const std::filesystem::path dir = target.has_parent_path() ? target.parent_path() : std::filesystem::path(".");
  // A hidden name beside the target, so that rename() stays on one file system.
  std::string tmpl = (dir / ("." + target.filename().string() + ".plumb-XXXXXX")).string();
  fd_ = ::mkstemp(tmpl.data());
  if (fd_ < 0) io_error(path, "cannot create a temporary file beside the output");
  temp_path_ = tmpl;
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

void OutputFile::flush_buffer() {
  if (buffer_.empty()) return;
  write_through(std::string_view(buffer_.data(), buffer_.size()));
  buffer_.clear();
}

void OutputFile::commit() {
  flush_buffer();
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
