#include "shards/shard_writer.h"

#include <xxhash.h>
#include <zlib.h>

#include <algorithm>
#include <cstring>
#include <numeric>

#include "io/output_file.h"

namespace sheaf {

void ShardWriter::add(const std::vector<uint32_t>& source, const std::vector<uint32_t>& target) {
  src_.push_back(source);
  tgt_.push_back(target);
  src_ids_ += source.size();
  tgt_ids_ += target.size();
}

namespace {

void put_ids(std::string& out, const std::vector<std::vector<uint32_t>>& side, const std::vector<size_t>& order,
             uint32_t width) {
  for (size_t i : order) {
    for (uint32_t id : side[i]) {
      if (width == 2) {
        uint16_t v = static_cast<uint16_t>(id);
        out.append(reinterpret_cast<const char*>(&v), 2);
      } else {
        out.append(reinterpret_cast<const char*>(&id), 4);
      }
    }
  }
}

void put_offsets(std::string& out, const std::vector<std::vector<uint32_t>>& side, const std::vector<size_t>& order) {
  uint64_t at = 0;
  out.append(reinterpret_cast<const char*>(&at), 8);
  for (size_t i : order) {
    at += side[i].size();
    out.append(reinterpret_cast<const char*>(&at), 8);
  }
}

void pad(std::string& out) { out.resize(align_up(out.size()), '\0'); }

}  // namespace

Result<ShardWriter::Written> ShardWriter::write(const std::string& path, uint32_t shard_index) {
  std::vector<size_t> order(src_.size());
  std::iota(order.begin(), order.end(), 0);
  if (s_.order == kLengthOrder)
    std::stable_sort(order.begin(), order.end(), [&](size_t a, size_t b) {
      return std::pair(src_[a].size(), tgt_[a].size()) < std::pair(src_[b].size(), tgt_[b].size());
    });
  ShardHeader h{};
  std::memcpy(h.magic, kShardMagic, 8);
  h.version = kShardFormat;
  h.id_width = s_.id_width;
  h.pairs = src_.size();
  h.source_vocab = s_.source_vocab;
  h.target_vocab = s_.target_vocab;
  h.order = s_.order;
  h.flags = s_.flags;
  h.shard_index = shard_index;
  std::string body(kShardHeaderSize, '\0');
  // One side: its offsets, then its ids, each starting on a 64-byte boundary.
  auto side = [&](const std::vector<std::vector<uint32_t>>& ids, uint64_t& offsets_at, uint64_t& ids_at) {
    offsets_at = body.size();
    put_offsets(body, ids, order);
    pad(body);
    ids_at = body.size();
    put_ids(body, ids, order, s_.id_width);
    pad(body);
  };
  side(src_, h.source_offsets, h.source_ids);
  side(tgt_, h.target_offsets, h.target_ids);
  h.source_count = src_ids_;
  h.target_count = tgt_ids_;
  h.file_size = body.size() + 8;
  h.body_crc32 = static_cast<uint32_t>(
      crc32(0, reinterpret_cast<const Bytef*>(body.data() + kShardHeaderSize), static_cast<uInt>(body.size() - kShardHeaderSize)));
  h.header_checksum = XXH3_64bits(&h, 112);
  h.header_crc32 = static_cast<uint32_t>(crc32(0, reinterpret_cast<const Bytef*>(&h), 112));
  std::memcpy(body.data(), &h, sizeof h);
  uint64_t sum = XXH3_64bits(body.data() + kShardHeaderSize, body.size() - kShardHeaderSize);
  body.append(reinterpret_cast<const char*>(&sum), 8);

  OutputFile f;
  SHEAF_TRY(f.open(path));
  f.write(body);
  SHEAF_TRY(f.commit());
  Written w{f.size(), f.checksum(), h.pairs};
  src_.clear();
  tgt_.clear();
  src_ids_ = tgt_ids_ = 0;
  return w;
}

}  // namespace sheaf
