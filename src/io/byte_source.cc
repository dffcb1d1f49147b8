#include "io/byte_source.h"

#include <bzlib.h>
#include <fcntl.h>
#include <lzma.h>
#include <poll.h>
#include <sys/stat.h>
#include <unistd.h>
#include <xxhash.h>
#include <zlib.h>
#include <zstd.h>

#include <algorithm>
#include <cerrno>
#include <cstring>
#include <vector>

#include "core/interrupt.h"

namespace sheaf {

const char* compression_name(Compression c) {
  switch (c) {
    case Compression::kNone: return "none";
    case Compression::kGzip: return "gzip";
    case Compression::kZstd: return "zstd";
    case Compression::kBzip2: return "bzip2";
    case Compression::kXz: return "xz";
  }
  return "none";
}

namespace {

Error io_error(const std::string& file, const std::string& what) {
  return Error(ErrorKind::kIo, what + ": " + std::strerror(errno), Location{file, 0, 0, {}});
}

// Raw file descriptor reader with a small look-ahead used for detection.
// Every read first checks the interrupt flag, and on a pipe or terminal waits
// in slices of 100 ms, so that a signal stops the run within a second even
// when the other end never writes (a signal handler alone would not: the
// signal may be taken by another thread, and read() is restarted after it).
class FdReader {
 public:
  FdReader(int fd, std::string name) : fd_(fd), name_(std::move(name)), xxh_(XXH3_createState()) {
    XXH3_64bits_reset(xxh_);
    struct stat st {};
    may_wait_ = ::fstat(fd_, &st) != 0 || !S_ISREG(st.st_mode);
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
      SHEAF_TRY(wait_readable());
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
      SHEAF_TRY(wait_readable());
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
  Status wait_readable() {
    for (;;) {
      if (interrupt_requested().load(std::memory_order_relaxed)) return interrupted_error();
      if (!may_wait_) return {};
      struct pollfd p {fd_, POLLIN, 0};
      int r = ::poll(&p, 1, 100);
      if (r > 0 || (r < 0 && errno != EINTR)) return {};  // readable, closed, or let read() report it
    }
  }

  int fd_;
  bool may_wait_ = false;
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

// bzip2 (Debian's libbz2). Several streams one after another (as parallel
// bzip2 writers produce) are one input, as bzip2 -d reads them.
class Bzip2Source : public ByteSource {
 public:
  Bzip2Source(std::unique_ptr<FdReader> fd, std::string name) : fd_(std::move(fd)), in_(kInChunk) {
    name_ = std::move(name);
    std::memset(&bz_, 0, sizeof bz_);
    BZ2_bzDecompressInit(&bz_, 0, 0);
  }
  ~Bzip2Source() override { BZ2_bzDecompressEnd(&bz_); }
  Result<size_t> read(char* buf, size_t n) override {
    bz_.next_out = buf;
    bz_.avail_out = static_cast<unsigned>(std::min<size_t>(n, UINT32_MAX));
    const unsigned want = bz_.avail_out;
    while (bz_.avail_out == want && !done_) {
      if (bz_.avail_in == 0) {
        auto r = fd_->read(in_.data(), in_.size());
        if (!r.ok()) return r.error();
        if (*r == 0) {
          if (mid_stream_) return corrupt("the bzip2 stream ends early (truncated file?)");
          done_ = true;
          break;
        }
        bz_.next_in = in_.data();
        bz_.avail_in = static_cast<unsigned>(*r);
      }
      mid_stream_ = true;
      int rc = BZ2_bzDecompress(&bz_);
      if (rc == BZ_STREAM_END) {
        mid_stream_ = false;
        ++streams_;
        BZ2_bzDecompressEnd(&bz_);
        char* next_in = bz_.next_in;
        unsigned avail_in = bz_.avail_in;
        char* next_out = bz_.next_out;
        unsigned avail_out = bz_.avail_out;
        std::memset(&bz_, 0, sizeof bz_);
        BZ2_bzDecompressInit(&bz_, 0, 0);
        bz_.next_in = next_in;
        bz_.avail_in = avail_in;
        bz_.next_out = next_out;
        bz_.avail_out = avail_out;
      } else if (rc != BZ_OK) {
        // Say what libbz2's code means (bzlib.h): a new stream that does not
        // start with the "BZh" magic after a complete one is trailing data.
        if (rc == BZ_DATA_ERROR_MAGIC && streams_ > 0)
          return corrupt("the bytes after the end of the bzip2 data are not bzip2 (trailing garbage after stream " +
                         std::to_string(streams_) + "); remove them or recompress the file");
        if (rc == BZ_DATA_ERROR_MAGIC) return corrupt("the file does not start like bzip2 data (no \"BZh\" magic)");
        if (rc == BZ_DATA_ERROR) return corrupt("the bzip2 data are damaged (a block or CRC check failed)");
        if (rc == BZ_MEM_ERROR) return corrupt("libbz2 ran out of memory");
        return corrupt("the bzip2 stream is corrupt (libbz2 error " + std::to_string(rc) + ")");
      }
    }
    return size_t{want - bz_.avail_out};
  }
  uint64_t consumed() const override { return fd_->consumed() - bz_.avail_in; }
  Compression compression() const override { return Compression::kBzip2; }
  uint64_t checksum() const override { return fd_->checksum(); }
  uint64_t file_bytes() const override { return fd_->consumed(); }

 private:
  Error corrupt(const std::string& what) {
    return Error(ErrorKind::kInput, what + "; check the file with 'bzip2 -t'", Location{name_, 0, 0, consumed()});
  }
  std::unique_ptr<FdReader> fd_;
  std::vector<char> in_;
  bz_stream bz_;
  uint64_t streams_ = 0;  // complete streams read
  bool done_ = false;
  bool mid_stream_ = false;
};

// xz (Debian's liblzma), concatenated streams included.
class XzSource : public ByteSource {
 public:
  XzSource(std::unique_ptr<FdReader> fd, std::string name) : fd_(std::move(fd)), in_(kInChunk) {
    name_ = std::move(name);
    ok_ = lzma_stream_decoder(&xz_, UINT64_MAX, LZMA_CONCATENATED) == LZMA_OK;
  }
  ~XzSource() override { lzma_end(&xz_); }
  Result<size_t> read(char* buf, size_t n) override {
    if (!ok_) return corrupt("the xz decoder could not start (out of memory?)");
    xz_.next_out = reinterpret_cast<uint8_t*>(buf);
    xz_.avail_out = n;
    while (xz_.avail_out == n && !done_) {
      if (xz_.avail_in == 0 && !eof_) {
        auto r = fd_->read(in_.data(), in_.size());
        if (!r.ok()) return r.error();
        eof_ = *r == 0;
        xz_.next_in = reinterpret_cast<const uint8_t*>(in_.data());
        xz_.avail_in = *r;
      }
      lzma_ret rc = lzma_code(&xz_, eof_ ? LZMA_FINISH : LZMA_RUN);
      if (rc == LZMA_STREAM_END) {
        done_ = true;
      } else if (rc == LZMA_BUF_ERROR && eof_) {
        return corrupt("the xz stream ends early (truncated file?)");
      } else if (rc != LZMA_OK) {
        return corrupt(std::string("the xz stream is corrupt (") +
                       (rc == LZMA_DATA_ERROR     ? "data error"
                        : rc == LZMA_FORMAT_ERROR ? "format error"
                        : rc == LZMA_MEM_ERROR    ? "out of memory"
                                                  : "liblzma error " + std::to_string(static_cast<int>(rc))) +
                       ")");
      }
    }
    return n - xz_.avail_out;
  }
  uint64_t consumed() const override { return fd_->consumed() - xz_.avail_in; }
  Compression compression() const override { return Compression::kXz; }
  uint64_t checksum() const override { return fd_->checksum(); }
  uint64_t file_bytes() const override { return fd_->consumed(); }

 private:
  Error corrupt(const std::string& what) {
    return Error(ErrorKind::kInput, what + "; check the file with 'xz -t'", Location{name_, 0, 0, consumed()});
  }
  std::unique_ptr<FdReader> fd_;
  std::vector<char> in_;
  lzma_stream xz_ = LZMA_STREAM_INIT;
  bool ok_ = false;
  bool done_ = false;
  bool eof_ = false;
};

// Formats sheaf does not read, named so the message says what to do.
const char* unread_format(std::string_view h) {
  if (h.starts_with(std::string_view("\x04\x22\x4D\x18", 4))) return "LZ4 (decompress it first: lz4 -d)";
  if (h.starts_with(std::string_view("PK\x03\x04", 4))) return "a zip archive (extract the file first: unzip)";
  if (h.starts_with(std::string_view("7z\xBC\xAF\x27\x1C", 6))) return "a 7-Zip archive (extract the file first)";
  return nullptr;
}

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

namespace {

class RangeSource : public ByteSource {
 public:
  RangeSource(int fd, std::string name, uint64_t begin, uint64_t end)
      : fd_(fd), at_(begin), end_(end), xxh_(XXH3_createState()) {
    name_ = std::move(name);
    XXH3_64bits_reset(xxh_);
  }
  ~RangeSource() override {
    ::close(fd_);
    XXH3_freeState(xxh_);
  }
  Result<size_t> read(char* buf, size_t n) override {
    if (interrupt_requested().load(std::memory_order_relaxed)) return interrupted_error();
    n = static_cast<size_t>(std::min<uint64_t>(n, end_ - at_));
    for (;;) {
      if (n == 0) return size_t{0};
      ssize_t r = ::pread(fd_, buf, n, static_cast<off_t>(at_));
      if (r < 0 && errno == EINTR) continue;
      if (r < 0) return io_error(name_, "cannot read input");
      if (r == 0)
        return Error(ErrorKind::kInput, "the file is shorter than when the run was planned; plan it again",
                     Location{name_, 0, 0, at_});
      at_ += static_cast<uint64_t>(r);
      consumed_ += static_cast<uint64_t>(r);
      XXH3_64bits_update(xxh_, buf, static_cast<size_t>(r));
      return static_cast<size_t>(r);
    }
  }
  uint64_t consumed() const override { return consumed_; }
  Compression compression() const override { return Compression::kNone; }
  uint64_t checksum() const override { return XXH3_64bits_digest(xxh_); }
  uint64_t file_bytes() const override { return consumed_; }

 private:
  int fd_;
  uint64_t at_, end_, consumed_ = 0;
  XXH3_state_t* xxh_;
};

}  // namespace

Result<std::unique_ptr<ByteSource>> open_byte_range(const std::string& path, uint64_t begin, uint64_t end) {
  int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
  if (fd < 0)
    return Error(ErrorKind::kInput, std::string("cannot open input: ") + std::strerror(errno), Location{path, 0, 0, {}});
  ::posix_fadvise(fd, static_cast<off_t>(begin), static_cast<off_t>(end - begin), POSIX_FADV_SEQUENTIAL);
  return std::unique_ptr<ByteSource>(std::make_unique<RangeSource>(fd, path, begin, std::max(begin, end)));
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
  // zstd frames (RFC 8878 section 3.1.1) or skippable frames (3.1.2: magic
  // 0x184D2A50 to 0x184D2A5F, little-endian), which parallel writers put first.
  bool zstd = (b(0) == 0x28 && b(1) == 0xB5 && b(2) == 0x2F && b(3) == 0xFD) ||
              ((b(0) & 0xF0) == 0x50 && b(1) == 0x2A && b(2) == 0x4D && b(3) == 0x18);
  // bzip2: "BZh", the block size digit, then the magic of a block (pi) or of
  // the end of the stream (sqrt pi), so a text line starting "BZh9" is text.
  bool bzip2 = h.size() >= 10 && h.starts_with("BZh") && h[3] >= '1' && h[3] <= '9' &&
               (h.substr(4, 6) == std::string_view("\x31\x41\x59\x26\x53\x59", 6) ||
                h.substr(4, 6) == std::string_view("\x17\x72\x45\x38\x50\x90", 6));
  bool xz = h.starts_with(std::string_view("\xFD" "7zXZ\x00", 6));
  if (b(0) == 0x1F && b(1) == 0x8B) {
    src = std::make_unique<GzipSource>(std::move(reader), name);
  } else if (zstd) {
    src = std::make_unique<ZstdSource>(std::move(reader), name);
  } else if (bzip2) {
    src = std::make_unique<Bzip2Source>(std::move(reader), name);
  } else if (xz) {
    src = std::make_unique<XzSource>(std::move(reader), name);
  } else if (const char* other = unread_format(h)) {
    return Error(ErrorKind::kInput,
                 std::string("the input is ") + other + "; sheaf reads plain text, gzip, zstd, bzip2 and xz",
                 Location{name, 0, 0, {}});
  } else {
    return std::unique_ptr<ByteSource>(std::make_unique<PlainSource>(std::move(reader), name));
  }
  return src;
}

}  // namespace sheaf
