// OutputFile: a buffered, checksummed output file written atomically.
//
// Bytes go to "<path>.partial"; commit() flushes, fsyncs and renames it to
// `path`, so a file under its final name is always complete. Size, record
// count and the XXH3-64 of the content are kept as it is written, so the run
// record needs no second read. A write error (a full disk) is reported by
// write()'s caller through status() and by commit().
#pragma once

#include <cstdint>
#include <memory>
#include <optional>
#include <string>
#include <string_view>

#include <xxhash.h>

#include "core/error.h"

namespace sheaf {

class OutputFile {
 public:
  OutputFile() = default;
  ~OutputFile();
  OutputFile(const OutputFile&) = delete;
  OutputFile& operator=(const OutputFile&) = delete;

  // The buffer is set aside at the first write(), so a file written only
  // with write_now (a writer that buffers for itself, with many files open)
  // holds none.
  Status open(const std::string& path);
  void write(std::string_view bytes) {
    if (buf_.size() + bytes.size() > buf_.capacity()) {
      write_slow(bytes);
      return;
    }
    buf_.append(bytes);
  }
  // Writes `bytes` to the file at once, past the buffer (for a writer that
  // buffers for itself, with many files open).
  void write_now(std::string_view bytes);
  void add_record() { ++records_; }
  Status status() const { return error_ ? Status(*error_) : Status(); }
  Status commit();
  // Removes the partial file (after an error or interruption).
  void discard();

  // A point to come back to: everything written so far (flushed to the
  // partial file). rewind() cuts the file back to it, with its size, record
  // count and checksum as they were, so a writer can take back the rows of
  // a part of the work that failed.
  struct Mark {
    uint64_t size = 0, records = 0;
    std::shared_ptr<XXH3_state_t> state;  // null: the empty file
  };
  Mark mark();
  Status rewind(const Mark& m);

  const std::string& path() const { return path_; }
  uint64_t size() const { return size_; }
  uint64_t records() const { return records_; }
  uint64_t checksum() const { return digest_; }
  bool committed() const { return committed_; }

 private:
  // 256 KiB: one write(2) per 256 KiB costs nothing measurable, and a run
  // keeps several of these open at once (each split, rejected.tsv, the
  // split origins). A write of kBuffer or more goes to the file past the
  // buffer, which so never grows beyond kBuffer.
  static constexpr size_t kBuffer = 256 << 10;
  void write_slow(std::string_view bytes);
  void flush();
  void put(const char* p, size_t n);
  std::string path_;
  int fd_ = -1;
  std::string buf_;
  uint64_t size_ = 0, records_ = 0, digest_ = 0;
  XXH3_state_t* xxh_ = nullptr;
  std::optional<Error> error_;
  bool committed_ = false;
};

// XXH3-64 of a whole file, streamed.
Result<uint64_t> checksum_file(const std::string& path, uint64_t* size = nullptr);
std::string hex64(uint64_t v);

}  // namespace sheaf
