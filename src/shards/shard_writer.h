// ShardWriter: collects encoded pairs and writes them as one shard file,
// atomically (a temporary name, then rename). Not thread-safe; the shard
// step feeds it in input order.
//
// Memory: the ids are held at the shard's id width (2 or 4 bytes), in
// blocks of 1 MiB, with 16 bytes a pair for where each pair ends (and 8
// more while a length-ordered shard is written, for the order); write()
// makes the file in two streamed passes over them (checksums first, since
// the header holds them, then the bytes), never a copy of the whole body.
#pragma once

#include <span>
#include <string>
#include <vector>

#include "core/error.h"
#include "shards/shard_format.h"

namespace sheaf {

struct ShardSettings {
  uint32_t id_width = 2;
  uint64_t source_vocab = 0, target_vocab = 0;
  ShardOrder order = kInputOrder;
  uint32_t flags = 0;
  uint32_t source_specials[4] = {0, 1, 2, 3};  // pad, unknown, bos, eos
  uint32_t target_specials[4] = {0, 1, 2, 3};
};

class ShardWriter {
 public:
  explicit ShardWriter(ShardSettings s) : s_(s) {}

  void add(std::span<const uint32_t> source, std::span<const uint32_t> target);
  uint64_t pairs() const { return src_.ends.size(); }
  uint64_t id_bytes() const { return (src_.count() + tgt_.count()) * s_.id_width; }

  // Writes the collected pairs to `path`; clears the writer.
  struct Written {
    uint64_t size = 0, checksum = 0, pairs = 0;
  };
  Result<Written> write(const std::string& path, uint32_t shard_index);

  // One side's pairs: all ids back to back at the id width, in blocks of
  // kBlock bytes (a pair's ids may run across two), and where each pair
  // ends, in ids.
  struct Side {
    static constexpr size_t kBlock = 1 << 20;
    std::vector<std::string> blocks;
    std::vector<uint64_t> ends;
    uint64_t bytes = 0;
    uint64_t count() const { return ends.empty() ? 0 : ends.back(); }
    uint64_t begin(size_t i) const { return i == 0 ? 0 : ends[i - 1]; }
    uint64_t length(size_t i) const { return ends[i] - begin(i); }
    void append(const char* p, size_t n);
  };

 private:
  ShardSettings s_;
  Side src_, tgt_;
};

}  // namespace sheaf
