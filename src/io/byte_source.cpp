#include "io/byte_source.hpp"

#include <fcntl.h>
#include <openssl/evp.h>
#include <sys/stat.h>
#include <unistd.h>

#include <zlib.h>

#include <algorithm>
#include <cerrno>
#include <cstring>
#include <vector>

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

// zlib's state for one gzip stream, with the stored bytes it is reading.
struct ByteSource::Inflater {
  z_stream z{};
  std::vector<unsigned char> in = std::vector<unsigned char>(std::size_t{1} << 18);
  bool member_ended = false;  // the last member ended; more may follow
  bool stored_ended = false;  // no more stored bytes
  Inflater() {
    if (inflateInit2(&z, 16 + MAX_WBITS) != Z_OK) throw Error(ErrorKind::internal, "cannot initialise zlib");
  }
  ~Inflater() { inflateEnd(&z); }
  Inflater(const Inflater&) = delete;
  Inflater& operator=(const Inflater&) = delete;
};

ByteSource::ByteSource(const std::string& path, const ByteSourceOptions& options) : hashing_(options.hash) {
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
  if (options.decompress) {
    try {
      // A pipe may hand over one byte at a time: read until two bytes or the end.
      char magic[2];
      std::size_t got = 0;
      while (got < 2) {
        const std::size_t n = read_stored(magic + got, 2 - got);
        if (n == 0) break;
        got += n;
      }
      ahead_.assign(magic, got);
      if (got == 2 && static_cast<unsigned char>(magic[0]) == 0x1f && static_cast<unsigned char>(magic[1]) == 0x8b)
        inflater_ = std::make_unique<Inflater>();
    } catch (...) {
      if (owns_fd_) ::close(fd_);
      throw;
    }
  }
}

ByteSource::~ByteSource() {
  if (owns_fd_) ::close(fd_);
}

std::size_t ByteSource::read_stored(char* out, std::size_t size) {
  if (ahead_pos_ < ahead_.size()) {
    const std::size_t n = std::min(size, ahead_.size() - ahead_pos_);
    std::memcpy(out, ahead_.data() + ahead_pos_, n);
    ahead_pos_ += n;
    return n;
  }
  for (;;) {
    const ssize_t got = ::read(fd_, out, size);
    if (got >= 0) {
      if (hashing_) hash_.update(out, static_cast<std::size_t>(got));
      bytes_read_ += static_cast<std::uint64_t>(got);
      return static_cast<std::size_t>(got);
    }
    if (errno == EINTR) continue;
    Location loc;
    loc.file = name_;
    throw Error(ErrorKind::io, std::string("cannot read: ") + std::strerror(errno), loc);
  }
}

void ByteSource::fail_input(const std::string& message, const std::string& expected) const {
  Location loc;
  loc.file = name_;
  throw Error(ErrorKind::input, message, loc, {}, expected);
}

std::size_t ByteSource::read(char* out, std::size_t size) {
  if (size == 0) return 0;
  return inflater_ ? inflate_into(out, size) : read_stored(out, size);
}

std::size_t ByteSource::inflate_into(char* out, std::size_t size) {
  Inflater& g = *inflater_;
  z_stream& z = g.z;
  const uInt want = static_cast<uInt>(std::min<std::size_t>(size, 1u << 30));
  z.next_out = reinterpret_cast<Bytef*>(out);
  z.avail_out = want;
  while (z.avail_out == want) {
    if (z.avail_in == 0 && !g.stored_ended) {
      const std::size_t n = read_stored(reinterpret_cast<char*>(g.in.data()), g.in.size());
      if (n == 0) g.stored_ended = true;
      z.next_in = g.in.data();
      z.avail_in = static_cast<uInt>(n);
    }
    if (g.member_ended) {
      if (z.avail_in == 0) {
        if (g.stored_ended) break;  // the end of the last member is the end of the input
        continue;
      }
      // Another member follows (as `cat a.gz b.gz` makes), or bytes that
      // are not gzip data at all.
      if (z.next_in[0] != 0x1f)
        fail_input("bytes that are not gzip data follow the end of the gzip data", "a complete gzip file");
      inflateReset(&z);
      g.member_ended = false;
    }
    if (z.avail_in == 0 && g.stored_ended)
      fail_input("the gzip data ends before its end marker (is the file truncated?)", "a complete gzip file");
    const int r = inflate(&z, Z_NO_FLUSH);
    if (r == Z_STREAM_END) {
      g.member_ended = true;
    } else if (r == Z_DATA_ERROR || r == Z_NEED_DICT) {
      fail_input(std::string("the gzip data is corrupt (") + (z.msg ? z.msg : "invalid data") + ")",
                 "a complete, uncorrupted gzip file");
    } else if (r == Z_MEM_ERROR) {
      throw Error(ErrorKind::internal, "zlib ran out of memory");
    }
    // Z_OK and Z_BUF_ERROR: go on, reading more stored bytes when needed.
  }
  return want - z.avail_out;
}

}  // namespace plumb::io
