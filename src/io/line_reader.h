// LineReader: cuts a ByteSource into lines in bounded memory.
//
// A line ends at LF; a CR before the LF is removed (CRLF files read like LF
// files), and a UTF-8 byte-order mark at the start of the stream is removed.
// A line longer than `max_line_bytes` is not kept in memory: the reader skips
// to its end and returns it with `oversize` set and its length, so a file with
// a 200 MB line and no newline costs no more memory than any other.
// A final line without LF is returned like any other.
#pragma once

#include <cstdint>
#include <memory>
#include <string>
#include <string_view>

#include "core/error.h"
#include "io/byte_source.h"

namespace sheaf {

struct Line {
  std::string_view text;   // valid until the next call to next()
  uint64_t number = 0;     // 1-based
  uint64_t offset = 0;     // byte offset of the line's start in the (decompressed) stream
  uint64_t length = 0;     // bytes of the line without its terminator
  bool oversize = false;   // text is empty; the line was longer than the cap
};

class LineReader {
 public:
  LineReader(std::unique_ptr<ByteSource> src, size_t max_line_bytes);

  // Reads the next line; returns false at the end of the stream.
  Result<bool> next(Line& line);

  const std::string& name() const { return src_->name(); }
  uint64_t consumed() const { return src_->consumed(); }
  uint64_t lines() const { return number_; }
  Compression compression() const { return src_->compression(); }
  const ByteSource& source() const { return *src_; }

 private:
  Result<size_t> fill();

  std::unique_ptr<ByteSource> src_;
  size_t max_line_;
  std::string buf_;
  size_t begin_ = 0, end_ = 0;
  uint64_t offset_ = 0;  // stream offset of buf_[begin_]
  uint64_t number_ = 0;
  bool eof_ = false;
  bool first_ = true;
};

}  // namespace sheaf
