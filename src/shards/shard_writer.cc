#include "shards/shard_writer.h"

#include <xxhash.h>
#include <zlib.h>

#include <algorithm>
#include <cstddef>
#include <cstring>
#include <numeric>

#include "io/output_file.h"

namespace sheaf {

void ShardWriter::add(std::span<const uint32_t> source, std::span<const uint32_t> target) {
  src_.ids.insert(src_.ids.end(), source.begin(), source.end());
  src_.ends.push_back(src_.ids.size());
  tgt_.ids.insert(tgt_.ids.end(), target.begin(), target.end());
  tgt_.ends.push_back(tgt_.ids.size());
}

namespace {

template <typename Side>
void put_ids(std::string& out, const Side& side, const std::vector<size_t>& order, uint32_t width) {
  size_t at = out.size();
  out.resize(at + side.ids.size() * width);
  char* p = out.data() + at;
  for (size_t i : order) {
    const uint32_t* ids = side.ids.data() + side.begin(i);
    for (uint64_t k = 0, n = side.length(i); k < n; ++k) {
      if (width == 2) {
        uint16_t v = static_cast<uint16_t>(ids[k]);
        std::memcpy(p, &v, 2);
      } else {
        std::memcpy(p, &ids[k], 4);
      }
      p += width;
    }
  }
}

template <typename Side>
void put_offsets(std::string& out, const Side& side, const std::vector<size_t>& order) {
  size_t at = out.size();
  out.resize(at + 8 * (order.size() + 1));
  char* p = out.data() + at;
  uint64_t end = 0;
  std::memcpy(p, &end, 8);
  for (size_t i : order) {
    end += side.length(i);
    std::memcpy(p += 8, &end, 8);
  }
}

void pad(std::string& out) { out.resize(align_up(out.size()), '\0'); }

}  // namespace

Result<ShardWriter::Written> ShardWriter::write(const std::string& path, uint32_t shard_index) {
  std::vector<size_t> order(pairs());
  std::iota(order.begin(), order.end(), 0);
  if (s_.order == kLengthOrder)
    std::stable_sort(order.begin(), order.end(), [&](size_t a, size_t b) {
      return std::pair(src_.length(a), tgt_.length(a)) < std::pair(src_.length(b), tgt_.length(b));
    });
  ShardHeader h{};
  std::memcpy(h.magic, kShardMagic, 8);
  h.version = kShardFormat;
  h.id_width = s_.id_width;
  h.pairs = pairs();
  h.source_vocab = s_.source_vocab;
  h.target_vocab = s_.target_vocab;
  h.order = s_.order;
  h.flags = s_.flags;
  h.shard_index = shard_index;
  std::memcpy(h.source_specials, s_.source_specials, sizeof h.source_specials);
  std::memcpy(h.target_specials, s_.target_specials, sizeof h.target_specials);
  std::string body(kShardHeaderSize, '\0');
  body.reserve(kShardHeaderSize + 3 * 64 + (pairs() + 1) * 16 + id_bytes() + 8);
  pad(body);  // the first array starts on a 64-byte boundary too
  // One side: its offsets, then its ids, each starting on a 64-byte boundary.
  auto side = [&](const Side& ids, uint64_t& offsets_at, uint64_t& ids_at) {
    offsets_at = body.size();
    put_offsets(body, ids, order);
    pad(body);
    ids_at = body.size();
    put_ids(body, ids, order, s_.id_width);
    pad(body);
  };
  side(src_, h.source_offsets, h.source_ids);
  side(tgt_, h.target_offsets, h.target_ids);
  h.source_count = src_.ids.size();
  h.target_count = tgt_.ids.size();
  h.file_size = body.size() + 8;
  h.body_crc32 = shard_crc32(body.data() + kShardHeaderSize, body.size() - kShardHeaderSize);
  constexpr size_t kCovered = offsetof(ShardHeader, header_checksum);
  h.header_checksum = XXH3_64bits(&h, kCovered);
  h.header_crc32 = shard_crc32(&h, kCovered);
  std::memcpy(body.data(), &h, sizeof h);
  uint64_t sum = XXH3_64bits(body.data() + kShardHeaderSize, body.size() - kShardHeaderSize);
  body.append(reinterpret_cast<const char*>(&sum), 8);

  OutputFile f;
  SHEAF_TRY(f.open(path));
  f.write(body);
  SHEAF_TRY(f.commit());
  Written w{f.size(), f.checksum(), h.pairs};
  src_ = Side{};
  tgt_ = Side{};
  return w;
}

}  // namespace sheaf
