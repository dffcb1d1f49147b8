// ShardWriter: collects encoded pairs and writes them as one shard file,
// atomically (a temporary name, then rename). Not thread-safe; the shard
// step feeds it in input order.
#pragma once

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
};

class ShardWriter {
 public:
  explicit ShardWriter(ShardSettings s) : s_(s) {}

  void add(const std::vector<uint32_t>& source, const std::vector<uint32_t>& target);
  uint64_t pairs() const { return src_.size(); }
  uint64_t id_bytes() const { return (src_ids_ + tgt_ids_) * s_.id_width; }

  // Writes the collected pairs to `path`; clears the writer.
  struct Written {
    uint64_t size = 0, checksum = 0, pairs = 0;
  };
  Result<Written> write(const std::string& path, uint32_t shard_index);

 private:
  ShardSettings s_;
  std::vector<std::vector<uint32_t>> src_, tgt_;
  uint64_t src_ids_ = 0, tgt_ids_ = 0;
};

}  // namespace sheaf
