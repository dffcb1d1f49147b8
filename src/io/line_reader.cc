#include "io/line_reader.h"

#include <cstring>

namespace sheaf {

namespace {
constexpr size_t kBlock = 1 << 20;
}

LineReader::LineReader(std::unique_ptr<ByteSource> src, size_t max_line_bytes)
    : src_(std::move(src)), max_line_(max_line_bytes) {
  buf_.resize(kBlock + max_line_ + 1);
}

// Moves the unread tail to the front and reads more behind it.
Result<size_t> LineReader::fill() {
  if (begin_ > 0) {
    std::memmove(buf_.data(), buf_.data() + begin_, end_ - begin_);
    end_ -= begin_;
    begin_ = 0;
  }
  if (end_ == buf_.size()) return size_t{0};
  auto r = src_->read(buf_.data() + end_, buf_.size() - end_);
  if (!r.ok()) return r.error();
  if (*r == 0) eof_ = true;
  end_ += *r;
  if (first_ && end_ > 0) {
    // Decide on the first bytes of the decompressed stream.
    if (end_ < 512 && !eof_) return *r;  // read a little more before deciding
    first_ = false;
    std::string_view head(buf_.data(), std::min<size_t>(end_, 512));
    if (const char* enc = wide_encoding(head))
      return Error(ErrorKind::kInput,
                   std::string("input looks like ") + enc + "; sheaf reads UTF-8: convert it first (e.g. iconv -f UTF-16 -t UTF-8)",
                   Location{name(), 0, 0, {}});
    if (end_ >= 3 && std::memcmp(buf_.data(), "\xEF\xBB\xBF", 3) == 0) {
      begin_ = 3;
      offset_ = 3;
    }
  }
  return *r;
}

Result<bool> LineReader::next(Line& line) {
  for (;;) {
    const char* base = buf_.data();
    const void* nl = (end_ > begin_ && !first_) ? std::memchr(base + begin_, '\n', end_ - begin_) : nullptr;
    if (nl != nullptr) {
      size_t at = static_cast<const char*>(nl) - base;
      size_t len = at - begin_;
      line.number = ++number_;
      line.offset = offset_;
      line.oversize = false;
      if (len > 0 && base[at - 1] == '\r') --len;
      line.length = len;
      if (len > max_line_) {
        line.oversize = true;
        line.text = {};
      } else {
        line.text = std::string_view(base + begin_, len);
      }
      offset_ += at + 1 - begin_;
      begin_ = at + 1;
      return true;
    }
    if (eof_) {
      if (end_ == begin_) return false;
      size_t len = end_ - begin_;
      line.number = ++number_;
      line.offset = offset_;
      if (base[end_ - 1] == '\r') --len;
      line.length = len;
      line.oversize = len > max_line_;
      line.text = line.oversize ? std::string_view{} : std::string_view(base + begin_, len);
      offset_ += end_ - begin_;
      begin_ = end_;
      return true;
    }
    if (end_ - begin_ > max_line_ && !first_) {
      // An oversize line: skip to its newline without keeping it.
      uint64_t start = offset_;
      uint64_t skipped = 0;
      for (;;) {
        const void* p = std::memchr(buf_.data() + begin_, '\n', end_ - begin_);
        if (p != nullptr) {
          size_t at = static_cast<const char*>(p) - buf_.data();
          skipped += at - begin_;
          offset_ += at + 1 - begin_;
          begin_ = at + 1;
          break;
        }
        skipped += end_ - begin_;
        offset_ += end_ - begin_;
        begin_ = end_;
        if (eof_) break;
        auto r = fill();
        if (!r.ok()) return r.error();
      }
      line.number = ++number_;
      line.offset = start;
      line.length = skipped;
      line.oversize = true;
      line.text = {};
      return true;
    }
    auto r = fill();
    if (!r.ok()) return r.error();
  }
}

}  // namespace sheaf
