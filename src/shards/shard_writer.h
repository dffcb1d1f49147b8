// ShardWriter: collects encoded pairs and writes them as one shard file,
// atomically (a temporary name, then rename). Not thread-safe; the shard
// step feeds it in input order.
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
  uint64_t id_bytes() const { return (src_.ids.size() + tgt_.ids.size()) * s_.id_width; }

  // Writes the collected pairs to `path`; clears the writer.
  struct Written {
    uint64_t size = 0, checksum = 0, pairs = 0;
  };
  Result<Written> write(const std::string& path, uint32_t shard_index);

 private:
  // One side's pairs: all ids back to back, and where each pair ends.
  struct Side {
    std::vector<uint32_t> ids;
    std::vector<uint64_t> ends;
    uint64_t begin(size_t i) const { return i == 0 ? 0 : ends[i - 1]; }
    uint64_t length(size_t i) const { return ends[i] - begin(i); }
  };
  ShardSettings s_;
  Side src_, tgt_;
};

}  // namespace sheaf
