// LineReader: cuts a ByteSource into lines in bounded memory.
//
// A line ends at LF; a CR before the LF is removed (CRLF files read like LF
// files); a CR anywhere else, a final one included, is part of the line. A
// UTF-8 byte-order mark at the start of the stream is left out of line 1's
// `text` but kept in its `raw` bytes. A file whose first line holds a CR in
// its middle and no LF (CR-only line ends) is an error that says so.
// A line longer than `max_line_bytes` is not kept in memory: the reader
// streams its bytes to the oversize sink (if one is set) as it skips to its
// end and returns it with `oversize` set and its length, so a file with a
// 200 MB line and no newline costs no more memory than any other.
// A final line without LF is returned like any other.
#pragma once

#include <cstdint>
#include <functional>
#include <memory>
#include <string>
#include <string_view>

#include "core/error.h"
#include "io/byte_source.h"

namespace sheaf {

struct Line {
  std::string_view raw;    // the line's bytes as in the input (a BOM included); valid until next()
  std::string_view text;   // raw without a byte-order mark
  uint64_t number = 0;     // 1-based
  uint64_t offset = 0;     // byte offset of the line's start in the (decompressed) stream
  uint64_t length = 0;     // bytes of the raw line without its terminator
  bool oversize = false;   // raw and text are empty; the line was longer than the cap
};

class LineReader {
 public:
  // Receives the bytes of an over-long line (its number, a piece), in order;
  // `last` marks the line's final call.
  using OversizeSink = std::function<Status(uint64_t line, std::string_view bytes, bool last)>;

  LineReader(std::unique_ptr<ByteSource> src, size_t max_line_bytes);
  void set_oversize_sink(OversizeSink sink) { sink_ = std::move(sink); }
  // The source starts at a line start inside a file (one part of a
  // partitioned run): no byte-order mark, wide-encoding or CR-only check,
  // which belong to the file's start. Call before the first next().
  void set_mid_stream() {
    first_ = false;
    mid_ = true;
  }

  // Reads the next line; returns false at the end of the stream.
  Result<bool> next(Line& line);

  const std::string& name() const { return src_->name(); }
  uint64_t consumed() const { return src_->consumed(); }
  uint64_t lines() const { return number_; }
  Compression compression() const { return src_->compression(); }
  const ByteSource& source() const { return *src_; }

 private:
  Result<size_t> fill();
  Status check_cr_only(size_t end) const;
  void set_line(Line& line, size_t len, size_t next);
  Status to_sink(uint64_t number, std::string_view bytes, bool last);

  std::unique_ptr<ByteSource> src_;
  size_t max_line_;
  std::string buf_;
  size_t begin_ = 0, end_ = 0;
  uint64_t offset_ = 0;  // stream offset of buf_[begin_]
  uint64_t number_ = 0;
  bool eof_ = false;
  bool first_ = true;
  bool mid_ = false;
  size_t bom_ = 0;  // bytes of a byte-order mark at the start of the stream
  OversizeSink sink_;
};

}  // namespace sheaf
