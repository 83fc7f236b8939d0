#include "io/byte_source.hpp"

#include <fcntl.h>
#include <openssl/evp.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>
#include <cstring>

#include "plumb/error.hpp"

namespace plumb::io {

Sha256::Sha256() : ctx_(EVP_MD_CTX_new()) {
  if (!ctx_ || EVP_DigestInit_ex(static_cast<EVP_MD_CTX*>(ctx_), EVP_sha256(), nullptr) != 1)
    throw Error(ErrorKind::internal, "cannot initialise SHA-256");
}

Sha256::~Sha256() { EVP_MD_CTX_free(static_cast<EVP_MD_CTX*>(ctx_)); }

void Sha256::update(const void* data, std::size_t size) {
  if (size > 0) EVP_DigestUpdate(static_cast<EVP_MD_CTX*>(ctx_), data, size);
}

std::string Sha256::hex() const {
  // Finish a copy so that the running hash can go on.
  EVP_MD_CTX* copy = EVP_MD_CTX_new();
  EVP_MD_CTX_copy_ex(copy, static_cast<const EVP_MD_CTX*>(ctx_));
  unsigned char digest[EVP_MAX_MD_SIZE];
  unsigned int len = 0;
  EVP_DigestFinal_ex(copy, digest, &len);
  EVP_MD_CTX_free(copy);
  static const char* digits = "0123456789abcdef";
  std::string out;
  for (unsigned int i = 0; i < len; ++i) {
    out += digits[digest[i] >> 4];
    out += digits[digest[i] & 15];
  }
  return out;
}

std::string sha256_hex(const std::string& bytes) {
  Sha256 h;
  h.update(bytes.data(), bytes.size());
  return h.hex();
}

ByteSource::ByteSource(const std::string& path) {
  if (path.empty() || path == "-") {
    fd_ = STDIN_FILENO;
    name_ = "<stdin>";
  } else {
    name_ = path;
    fd_ = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
    if (fd_ < 0) {
      Location loc;
      loc.file = path;
      throw Error(ErrorKind::io, std::string("cannot open: ") + std::strerror(errno), loc);
    }
    owns_fd_ = true;
  }
  struct stat st {};
  if (::fstat(fd_, &st) == 0 && S_ISREG(st.st_mode)) total_ = static_cast<std::uint64_t>(st.st_size);
  if (::fstat(fd_, &st) == 0 && S_ISDIR(st.st_mode)) {
    if (owns_fd_) ::close(fd_);
    Location loc;
    loc.file = name_;
    throw Error(ErrorKind::io, "is a directory, not a file", loc);
  }
}

ByteSource::~ByteSource() {
  if (owns_fd_) ::close(fd_);
}

std::size_t ByteSource::read(char* out, std::size_t size) {
  for (;;) {
    const ssize_t got = ::read(fd_, out, size);
    if (got >= 0) {
      hash_.update(out, static_cast<std::size_t>(got));
      bytes_read_ += static_cast<std::uint64_t>(got);
      return static_cast<std::size_t>(got);
    }
    if (errno == EINTR) continue;
    Location loc;
    loc.file = name_;
    throw Error(ErrorKind::io, std::string("cannot read: ") + std::strerror(errno), loc);
  }
}

}  // namespace plumb::io
