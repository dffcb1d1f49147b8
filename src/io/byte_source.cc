#include "io/byte_source.h"

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>
#include <zlib.h>
#include <xxhash.h>
#include <zstd.h>

#include <cerrno>
#include <cstring>
#include <vector>

namespace sheaf {

const char* compression_name(Compression c) {
  switch (c) {
    case Compression::kNone: return "none";
    case Compression::kGzip: return "gzip";
    case Compression::kZstd: return "zstd";
  }
  return "none";
}

namespace {

Error io_error(const std::string& file, const std::string& what) {
  return Error(ErrorKind::kIo, what + ": " + std::strerror(errno), Location{file, 0, 0, {}});
}

// Raw file descriptor reader with a small look-ahead used for detection.
class FdReader {
 public:
  FdReader(int fd, std::string name) : fd_(fd), name_(std::move(name)), xxh_(XXH3_createState()) {
    XXH3_64bits_reset(xxh_);
  }
  ~FdReader() {
    if (fd_ > 0) ::close(fd_);
    XXH3_freeState(xxh_);
  }
  uint64_t checksum() const { return XXH3_64bits_digest(xxh_); }
  Result<size_t> read(char* buf, size_t n) {
    size_t got = 0;
    if (pos_ < peek_.size()) {
      got = std::min(n, peek_.size() - pos_);
      std::memcpy(buf, peek_.data() + pos_, got);
      pos_ += got;
      consumed_ += got;
      XXH3_64bits_update(xxh_, buf, got);
      return got;
    }
    for (;;) {
      ssize_t r = ::read(fd_, buf, n);
      if (r < 0 && errno == EINTR) continue;
      if (r < 0) return io_error(name_, "cannot read input");
      consumed_ += static_cast<uint64_t>(r);
      XXH3_64bits_update(xxh_, buf, static_cast<size_t>(r));
      return static_cast<size_t>(r);
    }
  }
  // Fills the look-ahead with up to n bytes and returns it.
  Result<std::string_view> peek(size_t n) {
    while (peek_.size() < n) {
      char tmp[4096];
      ssize_t r = ::read(fd_, tmp, std::min(sizeof tmp, n - peek_.size()));
      if (r < 0 && errno == EINTR) continue;
      if (r < 0) return io_error(name_, "cannot read input");
      if (r == 0) break;
      peek_.append(tmp, static_cast<size_t>(r));
    }
    return std::string_view(peek_);
  }
  uint64_t consumed() const { return consumed_; }

 private:
  int fd_;
  std::string name_;
  std::string peek_;
  size_t pos_ = 0;
  uint64_t consumed_ = 0;
  XXH3_state_t* xxh_;
};

class PlainSource : public ByteSource {
 public:
  PlainSource(std::unique_ptr<FdReader> fd, std::string name) : fd_(std::move(fd)) { name_ = std::move(name); }
  Result<size_t> read(char* buf, size_t n) override { return fd_->read(buf, n); }
  uint64_t consumed() const override { return fd_->consumed(); }
  Compression compression() const override { return Compression::kNone; }
  uint64_t checksum() const override { return fd_->checksum(); }
  uint64_t file_bytes() const override { return fd_->consumed(); }

 private:
  std::unique_ptr<FdReader> fd_;
};

constexpr size_t kInChunk = 1 << 17;

class GzipSource : public ByteSource {
 public:
  GzipSource(std::unique_ptr<FdReader> fd, std::string name) : fd_(std::move(fd)), in_(kInChunk) {
    name_ = std::move(name);
    std::memset(&zs_, 0, sizeof zs_);
    inflateInit2(&zs_, 15 + 32);  // 32: accept gzip and zlib headers
  }
  ~GzipSource() override { inflateEnd(&zs_); }
  Result<size_t> read(char* buf, size_t n) override {
    if (done_) return size_t{0};
    zs_.next_out = reinterpret_cast<Bytef*>(buf);
    zs_.avail_out = static_cast<uInt>(n);
    while (zs_.avail_out == n) {
      if (zs_.avail_in == 0) {
        auto r = fd_->read(in_.data(), in_.size());
        if (!r.ok()) return r.error();
        if (*r == 0) {
          if (mid_stream_) return corrupt("the gzip stream ends early (truncated file?)");
          done_ = true;
          break;
        }
        zs_.next_in = reinterpret_cast<Bytef*>(in_.data());
        zs_.avail_in = static_cast<uInt>(*r);
      }
      mid_stream_ = true;
      int rc = inflate(&zs_, Z_NO_FLUSH);
      if (rc == Z_STREAM_END) {
        mid_stream_ = false;
        // Concatenated gzip members are one stream (as gzip -d reads them).
        inflateReset(&zs_);
      } else if (rc != Z_OK && rc != Z_BUF_ERROR) {
        return corrupt(std::string("the gzip stream is corrupt (") + (zs_.msg ? zs_.msg : "zlib error") + ")");
      }
    }
    return n - zs_.avail_out;
  }
  uint64_t consumed() const override { return fd_->consumed() - zs_.avail_in; }
  Compression compression() const override { return Compression::kGzip; }
  uint64_t checksum() const override { return fd_->checksum(); }
  uint64_t file_bytes() const override { return fd_->consumed(); }

 private:
  Error corrupt(const std::string& what) {
    return Error(ErrorKind::kInput, what + "; check the file with 'gzip -t'", Location{name_, 0, 0, consumed()});
  }
  std::unique_ptr<FdReader> fd_;
  std::vector<char> in_;
  z_stream zs_;
  bool done_ = false;
  bool mid_stream_ = false;
};

class ZstdSource : public ByteSource {
 public:
  ZstdSource(std::unique_ptr<FdReader> fd, std::string name) : fd_(std::move(fd)), in_(kInChunk) {
    name_ = std::move(name);
    ds_ = ZSTD_createDStream();
    ZSTD_initDStream(ds_);
  }
  ~ZstdSource() override { ZSTD_freeDStream(ds_); }
  Result<size_t> read(char* buf, size_t n) override {
    ZSTD_outBuffer out{buf, n, 0};
    while (out.pos == 0) {
      if (ib_.pos == ib_.size) {
        if (eof_) break;
        auto r = fd_->read(in_.data(), in_.size());
        if (!r.ok()) return r.error();
        if (*r == 0) {
          eof_ = true;
          if (last_hint_ != 0) {
            return Error(ErrorKind::kInput, "the zstd stream ends early (truncated file?); check it with 'zstd -t'",
                         Location{name_, 0, 0, consumed()});
          }
          break;
        }
        ib_ = ZSTD_inBuffer{in_.data(), *r, 0};
      }
      size_t hint = ZSTD_decompressStream(ds_, &out, &ib_);
      if (ZSTD_isError(hint)) {
        return Error(ErrorKind::kInput,
                     std::string("the zstd stream is corrupt (") + ZSTD_getErrorName(hint) + "); check it with 'zstd -t'",
                     Location{name_, 0, 0, consumed()});
      }
      last_hint_ = hint;
    }
    return out.pos;
  }
  uint64_t consumed() const override { return fd_->consumed() - (ib_.size - ib_.pos); }
  Compression compression() const override { return Compression::kZstd; }
  uint64_t checksum() const override { return fd_->checksum(); }
  uint64_t file_bytes() const override { return fd_->consumed(); }

 private:
  std::unique_ptr<FdReader> fd_;
  std::vector<char> in_;
  ZSTD_DStream* ds_;
  ZSTD_inBuffer ib_{nullptr, 0, 0};
  size_t last_hint_ = 0;
  bool eof_ = false;
};

}  // namespace

const char* wide_encoding(std::string_view head) {
  auto u = [&](size_t i) { return static_cast<unsigned char>(head[i]); };
  if (head.size() >= 4 && u(0) == 0 && u(1) == 0 && u(2) == 0xFE && u(3) == 0xFF) return "UTF-32 (big-endian byte-order mark)";
  if (head.size() >= 4 && u(0) == 0xFF && u(1) == 0xFE && u(2) == 0 && u(3) == 0) return "UTF-32 (little-endian byte-order mark)";
  if (head.size() >= 2 && u(0) == 0xFF && u(1) == 0xFE) return "UTF-16 (little-endian byte-order mark)";
  if (head.size() >= 2 && u(0) == 0xFE && u(1) == 0xFF) return "UTF-16 (big-endian byte-order mark)";
  // Without a mark: ASCII text in UTF-16/32 has zeros at fixed positions.
  size_t n = std::min<size_t>(head.size(), 512) & ~size_t{3};
  if (n < 16) return nullptr;
  size_t zero_at[4] = {0, 0, 0, 0};
  for (size_t i = 0; i < n; ++i)
    if (u(i) == 0) ++zero_at[i % 4];
  size_t q = n / 4;
  if (zero_at[1] + zero_at[2] + zero_at[3] >= 3 * q * 9 / 10 && zero_at[0] < q / 2) return "UTF-32 (little-endian, no byte-order mark)";
  if (zero_at[0] + zero_at[1] + zero_at[2] >= 3 * q * 9 / 10 && zero_at[3] < q / 2) return "UTF-32 (big-endian, no byte-order mark)";
  if (zero_at[1] + zero_at[3] >= 2 * q * 9 / 10 && zero_at[0] + zero_at[2] < q) return "UTF-16 (little-endian, no byte-order mark)";
  if (zero_at[0] + zero_at[2] >= 2 * q * 9 / 10 && zero_at[1] + zero_at[3] < q) return "UTF-16 (big-endian, no byte-order mark)";
  return nullptr;
}

Result<std::unique_ptr<ByteSource>> open_byte_source(const std::string& path) {
  int fd = 0;
  std::string name = path == "-" ? "<stdin>" : path;
  if (path != "-") {
    struct stat st;
    if (::stat(path.c_str(), &st) != 0)
      return Error(ErrorKind::kInput, std::string("cannot open input: ") + std::strerror(errno) + "; check the path",
                   Location{path, 0, 0, {}});
    if (S_ISDIR(st.st_mode))
      return Error(ErrorKind::kInput, "input is a directory; name a file", Location{path, 0, 0, {}});
    fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
    if (fd < 0)
      return Error(ErrorKind::kInput, std::string("cannot open input: ") + std::strerror(errno), Location{path, 0, 0, {}});
    ::posix_fadvise(fd, 0, 0, POSIX_FADV_SEQUENTIAL);
  }
  auto reader = std::make_unique<FdReader>(fd, name);
  auto head = reader->peek(512);
  if (!head.ok()) return head.error();
  std::string_view h = *head;
  auto b = [&](size_t i) { return i < h.size() ? static_cast<unsigned char>(h[i]) : 0x100; };
  std::unique_ptr<ByteSource> src;
  if (b(0) == 0x1F && b(1) == 0x8B) {
    src = std::make_unique<GzipSource>(std::move(reader), name);
  } else if (b(0) == 0x28 && b(1) == 0xB5 && b(2) == 0x2F && b(3) == 0xFD) {
    src = std::make_unique<ZstdSource>(std::move(reader), name);
  } else {
    return std::unique_ptr<ByteSource>(std::make_unique<PlainSource>(std::move(reader), name));
  }
  return src;
}

}  // namespace sheaf
