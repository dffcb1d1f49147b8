#include "shards/shard_writer.h"

#include <xxhash.h>
#include <zlib.h>

#include <algorithm>
#include <cstddef>
#include <cstring>
#include <functional>
#include <numeric>

#include "io/output_file.h"

namespace sheaf {

void ShardWriter::Side::append(const char* p, size_t n) {
  while (n > 0) {
    if (blocks.empty() || blocks.back().size() == kBlock) {
      blocks.emplace_back();
      blocks.back().reserve(kBlock);
    }
    std::string& b = blocks.back();
    size_t take = std::min(n, kBlock - b.size());
    b.append(p, take);
    p += take;
    n -= take;
    bytes += take;
  }
}

void ShardWriter::add(std::span<const uint32_t> source, std::span<const uint32_t> target) {
  auto put = [this](Side& side, std::span<const uint32_t> ids) {
    char buf[4096];
    size_t used = 0;
    for (uint32_t id : ids) {
      if (used + 4 > sizeof buf) {
        side.append(buf, used);
        used = 0;
      }
      if (s_.id_width == 2) {
        uint16_t v = static_cast<uint16_t>(id);
        std::memcpy(buf + used, &v, 2);
      } else {
        std::memcpy(buf + used, &id, 4);
      }
      used += s_.id_width;
    }
    side.append(buf, used);
    side.ends.push_back(side.count() + ids.size());
  };
  put(src_, source);
  put(tgt_, target);
}

namespace {

using Sink = std::function<void(const char*, size_t)>;

// Gathers small pieces into 64 KiB before they go to the sink.
class Gather {
 public:
  explicit Gather(const Sink& sink) : sink_(sink) { buf_.reserve(kSize); }
  ~Gather() { flush(); }
  void put(const char* p, size_t n) {
    if (buf_.size() + n > kSize) flush();
    if (n >= kSize) {
      sink_(p, n);
      return;
    }
    buf_.append(p, n);
  }
  void zeros(size_t n) {
    static const char kZero[64] = {};
    while (n > 0) {
      size_t take = std::min(n, sizeof kZero);
      put(kZero, take);
      n -= take;
    }
  }
  void flush() {
    if (!buf_.empty()) sink_(buf_.data(), buf_.size());
    buf_.clear();
  }

 private:
  static constexpr size_t kSize = 64 << 10;
  const Sink& sink_;
  std::string buf_;
};

// The bytes [at, at + n) of a side's ids.
void put_range(Gather& g, const ShardWriter::Side& side, uint64_t at, uint64_t n) {
  constexpr size_t kBlock = ShardWriter::Side::kBlock;
  while (n > 0) {
    const std::string& b = side.blocks[at / kBlock];
    size_t off = at % kBlock;
    size_t take = std::min<uint64_t>(n, b.size() - off);
    g.put(b.data() + off, take);
    at += take;
    n -= take;
  }
}

}  // namespace

Result<ShardWriter::Written> ShardWriter::write(const std::string& path, uint32_t shard_index) {
  const uint64_t n = pairs();
  const uint32_t width = s_.id_width;
  std::vector<size_t> order;  // empty: input order
  if (s_.order == kLengthOrder) {
    order.resize(n);
    std::iota(order.begin(), order.end(), 0);
    std::stable_sort(order.begin(), order.end(), [&](size_t a, size_t b) {
      return std::pair(src_.length(a), tgt_.length(a)) < std::pair(src_.length(b), tgt_.length(b));
    });
  }
  ShardHeader h{};
  std::memcpy(h.magic, kShardMagic, 8);
  h.version = kShardFormat;
  h.id_width = width;
  h.pairs = n;
  h.source_vocab = s_.source_vocab;
  h.target_vocab = s_.target_vocab;
  h.order = s_.order;
  h.flags = s_.flags;
  h.shard_index = shard_index;
  std::memcpy(h.source_specials, s_.source_specials, sizeof h.source_specials);
  std::memcpy(h.target_specials, s_.target_specials, sizeof h.target_specials);
  // The layout: the header, then per side its offsets and its ids, each
  // starting on a 64-byte boundary, then the body's XXH3-64.
  uint64_t pos = align_up(kShardHeaderSize);
  auto place = [&](const Side& side, uint64_t& offsets_at, uint64_t& ids_at) {
    offsets_at = pos;
    pos = align_up(pos + 8 * (n + 1));
    ids_at = pos;
    pos = align_up(pos + side.count() * width);
  };
  place(src_, h.source_offsets, h.source_ids);
  place(tgt_, h.target_offsets, h.target_ids);
  h.source_count = src_.count();
  h.target_count = tgt_.count();
  h.file_size = pos + 8;

  // The body (everything after the header, before the trailing checksum),
  // made twice: once for its checksums, once into the file.
  auto body = [&](const Sink& sink) {
    Gather g(sink);
    uint64_t at = kShardHeaderSize;
    auto pad = [&] {
      g.zeros(align_up(at) - at);
      at = align_up(at);
    };
    pad();
    for (const Side* side : {&src_, &tgt_}) {
      uint64_t end = 0;
      g.put(reinterpret_cast<const char*>(&end), 8);
      for (uint64_t k = 0; k < n; ++k) {
        end += side->length(order.empty() ? k : order[k]);
        g.put(reinterpret_cast<const char*>(&end), 8);
      }
      at += 8 * (n + 1);
      pad();
      if (order.empty()) {
        put_range(g, *side, 0, side->bytes);
      } else {
        for (size_t i : order) put_range(g, *side, side->begin(i) * width, side->length(i) * width);
      }
      at += side->bytes;
      pad();
    }
  };
  uLong crc = crc32_z(0, nullptr, 0);
  XXH3_state_t* xxh = XXH3_createState();
  XXH3_64bits_reset(xxh);
  body([&](const char* p, size_t len) {
    crc = crc32_z(crc, reinterpret_cast<const Bytef*>(p), len);
    XXH3_64bits_update(xxh, p, len);
  });
  uint64_t sum = XXH3_64bits_digest(xxh);
  XXH3_freeState(xxh);
  h.body_crc32 = static_cast<uint32_t>(crc);
  constexpr size_t kCovered = offsetof(ShardHeader, header_checksum);
  h.header_checksum = XXH3_64bits(&h, kCovered);
  h.header_crc32 = shard_crc32(&h, kCovered);

  OutputFile f;
  SHEAF_TRY(f.open(path));
  f.write(std::string_view(reinterpret_cast<const char*>(&h), sizeof h));
  body([&f](const char* p, size_t len) {
    if (len >= (64 << 10)) {
      f.write_now(std::string_view(p, len));  // a whole block: no copy through the buffer
    } else {
      f.write(std::string_view(p, len));
    }
  });
  f.write(std::string_view(reinterpret_cast<const char*>(&sum), 8));
  SHEAF_TRY(f.commit());
  Written w{f.size(), f.checksum(), n};
  src_ = Side{};
  tgt_ = Side{};
  return w;
}

}  // namespace sheaf
