// ByteSource: a stream of bytes from a file or standard input, decompressed
// when it is gzip, zstd, bzip2 or xz. The format is detected from the first
// bytes (gzip 1F 8B; zstd 28 B5 2F FD or a skippable frame 5? 2A 4D 18, RFC
// 8878; bzip2 "BZh" + size digit + block magic; xz FD 37 7A 58 5A 00), never
// from the file name; concatenated streams are one input. LZ4, zip and 7-Zip
// are refused with a message naming them. Text that starts like UTF-16 or
// UTF-32 (byte-order marks, or zero bytes in every second or fourth position)
// is refused with an error that says how to convert it.
// Reads check the interrupt flag (core/interrupt.h) and wait on a pipe in
// slices of 100 ms, so a signal stops even a reader whose input never comes.
#pragma once

#include <cstdint>
#include <memory>
#include <string>
#include <string_view>

#include "core/error.h"

namespace sheaf {

enum class Compression { kNone, kGzip, kZstd, kBzip2, kXz };
const char* compression_name(Compression c);

class ByteSource {
 public:
  virtual ~ByteSource() = default;
  // Reads up to `n` bytes; 0 means end of stream.
  virtual Result<size_t> read(char* buf, size_t n) = 0;
  // Bytes consumed from the underlying file so far (compressed bytes).
  virtual uint64_t consumed() const = 0;
  virtual Compression compression() const = 0;
  // XXH3-64 of the file's bytes read so far, and their count; at the end of
  // the stream these describe the whole (compressed) file.
  virtual uint64_t checksum() const = 0;
  virtual uint64_t file_bytes() const = 0;
  const std::string& name() const { return name_; }

 protected:
  std::string name_;
};

// Opens `path` ("-" = standard input) and wraps it in the right decompressor.
Result<std::unique_ptr<ByteSource>> open_byte_source(const std::string& path);

// Opens bytes [begin, end) of an uncompressed file, for one part of a
// partitioned run (pipeline/spread.h). No format is detected: the planner
// cuts only plain files, at line ends. checksum() and file_bytes() describe
// the range.
Result<std::unique_ptr<ByteSource>> open_byte_range(const std::string& path, uint64_t begin, uint64_t end);

// Names the wide encoding (UTF-16/32, with or without byte-order mark) that
// `head`, the first bytes of a decompressed stream, looks like, or nullptr.
const char* wide_encoding(std::string_view head);

}  // namespace sheaf
