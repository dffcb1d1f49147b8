// ShardReader: opens a shard by memory-mapping it and checks it before any
// id is read: size, magic, version, header checksum, every position and
// count against the file's size and alignment, offsets that never decrease
// and end at the id count, and the body checksum. A damaged or truncated
// shard is an error naming what is wrong; nothing is read out of bounds.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "core/error.h"
#include "shards/shard_format.h"

namespace sheaf {

class ShardReader {
 public:
  static Result<ShardReader> open(const std::string& path);
  ShardReader(ShardReader&& o) noexcept;
  ShardReader& operator=(ShardReader&&) = delete;
  ~ShardReader();

  const ShardHeader& header() const { return h_; }
  uint64_t pairs() const { return h_.pairs; }
  // The ids of one side of pair i (0 = source, 1 = target).
  void ids(uint64_t i, int side, std::vector<uint32_t>& out) const;
  // Largest id on a side (0 if the side is empty).
  uint32_t max_id(int side) const;

 private:
  ShardReader() = default;
  const uint8_t* data_ = nullptr;
  size_t size_ = 0;
  ShardHeader h_{};
};

}  // namespace sheaf
