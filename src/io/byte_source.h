// ByteSource: a stream of bytes from a file or standard input, decompressed
// when it is gzip or zstd. The format is detected from the first bytes (gzip
// 1F 8B, zstd 28 B5 2F FD), never from the file name. Text that starts like
// UTF-16 or UTF-32 (byte-order marks, or zero bytes in every second or fourth
// position) is refused with an error that says how to convert it.
#pragma once

#include <cstdint>
#include <memory>
#include <string>
#include <string_view>

#include "core/error.h"

namespace sheaf {

enum class Compression { kNone, kGzip, kZstd };
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

// Names the wide encoding (UTF-16/32, with or without byte-order mark) that
// `head`, the first bytes of a decompressed stream, looks like, or nullptr.
const char* wide_encoding(std::string_view head);

}  // namespace sheaf
