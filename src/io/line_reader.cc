#include "io/line_reader.h"

#include <algorithm>
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
    if (const char* enc = wide_encoding(head)) {
      std::string from = std::string_view(enc).starts_with("UTF-32") ? "UTF-32" : "UTF-16";
      return Error(ErrorKind::kInput,
                   std::string("input looks like ") + enc + "; sheaf reads UTF-8: convert it first (e.g. iconv -f " +
                       from + " -t UTF-8)",
                   Location{name(), 0, 0, {}});
    }
    if (end_ >= 3 && std::memcmp(buf_.data(), "\xEF\xBB\xBF", 3) == 0) bom_ = 3;
  }
  return *r;
}

// The first line would hold a CR that is not at its end: the file's lines may
// end with CR alone (classic Mac OS), which would make the whole file one
// line. Only text that reads as CR-ended lines is refused: every CR-cut
// segment shorter than max_line_bytes, and two CRs inside or one at the very
// end. One stray CR in a long first line, or in a one-pair file, is content
// (the line is kept, or streamed as an over-long line) and loses nothing.
Status LineReader::check_cr_only(size_t end) const {
  if (number_ != 0 || mid_ || end <= begin_ + 1) return {};
  const char* p = buf_.data() + begin_;
  const char* stop = buf_.data() + end;
  size_t inner = 0, longest = 0;
  for (const char* seg = p;;) {
    const void* cr = std::memchr(seg, '\r', static_cast<size_t>(stop - seg));
    const char* seg_end = cr ? static_cast<const char*>(cr) : stop;
    longest = std::max(longest, static_cast<size_t>(seg_end - seg));
    if (cr == nullptr) break;
    if (seg_end + 1 < stop) ++inner;
    seg = seg_end + 1;
    if (seg >= stop) break;
  }
  bool ends_with_cr = stop[-1] == '\r';
  if (inner == 0 || longest > max_line_ || (inner < 2 && !ends_with_cr)) return {};
  return Error(ErrorKind::kInput,
               "the lines of this file end with a carriage return (CR) alone, not LF or CR LF, so it reads as one "
               "line; convert the line ends first (e.g. tr '\\r' '\\n' < FILE > FILE.lf)",
               Location{name(), 1, 0, {}});
}

void LineReader::set_line(Line& line, size_t len, size_t next) {
  const char* base = buf_.data();
  line.number = ++number_;
  line.offset = offset_;
  size_t bom = number_ == 1 ? bom_ : 0;
  line.length = len;
  line.oversize = len > max_line_;
  line.raw = line.oversize ? std::string_view{} : std::string_view(base + begin_, len);
  line.text = line.raw.substr(std::min(bom, line.raw.size()));
  offset_ += next - begin_;
  begin_ = next;
}

Status LineReader::to_sink(uint64_t number, std::string_view bytes, bool last) {
  if (!sink_) return {};
  return sink_(number, bytes, last);
}

Result<bool> LineReader::next(Line& line) {
  for (;;) {
    const char* base = buf_.data();
    const void* nl = (end_ > begin_ && !first_) ? std::memchr(base + begin_, '\n', end_ - begin_) : nullptr;
    if (nl != nullptr) {
      size_t at = static_cast<const char*>(nl) - base;
      size_t len = at - begin_;
      if (len > 0 && base[at - 1] == '\r') --len;  // CR LF
      size_t start = begin_;
      set_line(line, len, at + 1);
      if (line.oversize) SHEAF_TRY(to_sink(number_, std::string_view(base + start, len), true));
      return true;
    }
    if (eof_) {
      if (end_ == begin_) return false;
      SHEAF_TRY(check_cr_only(end_));
      // A CR at the very end without LF is part of the line (not a line end).
      size_t start = begin_;
      set_line(line, end_ - begin_, end_);
      if (line.oversize) SHEAF_TRY(to_sink(number_, std::string_view(base + start, end_ - start), true));
      return true;
    }
    if (end_ - begin_ > max_line_ && !first_) {
      SHEAF_TRY(check_cr_only(end_));
      // An over-long line: stream it to the sink without keeping it. A CR at
      // the end of a piece is held back until the next byte shows whether it
      // belongs to a CR LF line end.
      uint64_t start = offset_;
      uint64_t length = 0;
      bool cr_held = false;
      auto emit = [&](size_t from, size_t to) -> Status {
        if (cr_held && to > from) {
          SHEAF_TRY(to_sink(number_ + 1, "\r", false));
          ++length;
          cr_held = false;
        }
        if (to > from && buf_[to - 1] == '\r') {
          --to;
          cr_held = true;
        }
        length += to - from;
        return to > from ? to_sink(number_ + 1, std::string_view(buf_.data() + from, to - from), false) : Status{};
      };
      for (;;) {
        const void* p = std::memchr(buf_.data() + begin_, '\n', end_ - begin_);
        if (p != nullptr) {
          size_t at = static_cast<const char*>(p) - buf_.data();
          SHEAF_TRY(emit(begin_, at));
          cr_held = false;  // the CR of a CR LF line end
          offset_ += at + 1 - begin_;
          begin_ = at + 1;
          break;
        }
        SHEAF_TRY(emit(begin_, end_));
        offset_ += end_ - begin_;
        begin_ = end_;
        if (eof_) break;
        auto r = fill();
        if (!r.ok()) return r.error();
      }
      if (cr_held) {  // a CR at the end of the stream is content
        SHEAF_TRY(to_sink(number_ + 1, "\r", false));
        ++length;
      }
      SHEAF_TRY(to_sink(number_ + 1, {}, true));
      line.number = ++number_;
      line.offset = start;
      line.length = length;
      line.oversize = true;
      line.text = {};
      line.raw = {};
      return true;
    }
    auto r = fill();
    if (!r.ok()) return r.error();
  }
}

}  // namespace sheaf
