#include "shards/shard_reader.h"

#include <fcntl.h>
#include <sys/mman.h>
#include <sys/stat.h>
#include <unistd.h>
#include <xxhash.h>
#include <zlib.h>

#include <algorithm>
#include <cerrno>
#include <cstddef>
#include <optional>
#include <cstring>

namespace sheaf {

ShardReader::ShardReader(ShardReader&& o) noexcept : data_(o.data_), size_(o.size_), h_(o.h_) {
  o.data_ = nullptr;
  o.size_ = 0;
}

ShardReader::~ShardReader() {
  if (data_ != nullptr && size_ > 0) ::munmap(const_cast<uint8_t*>(data_), size_);
}

Result<ShardReader> ShardReader::open(const std::string& path) {
  auto bad = [&](const std::string& what, std::optional<uint64_t> at = {}) {
    return Error(ErrorKind::kInput, "damaged shard: " + what, Location{path, 0, 0, at});
  };
  int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
  if (fd < 0) return Error(ErrorKind::kInput, std::string("cannot open shard: ") + std::strerror(errno), Location{path, 0, 0, {}});
  struct stat st;
  if (::fstat(fd, &st) != 0 || !S_ISREG(st.st_mode)) {
    ::close(fd);
    return Error(ErrorKind::kInput, "not a regular file", Location{path, 0, 0, {}});
  }
  ShardReader r;
  r.size_ = static_cast<size_t>(st.st_size);
  if (r.size_ < kShardHeaderSizeV1 + 8) {
    ::close(fd);
    return bad("the file has " + std::to_string(r.size_) + " bytes, less than a header and a checksum (truncated?)");
  }
  void* m = ::mmap(nullptr, r.size_, PROT_READ, MAP_PRIVATE, fd, 0);
  ::close(fd);
  if (m == MAP_FAILED) return Error(ErrorKind::kIo, std::string("cannot map shard: ") + std::strerror(errno), Location{path, 0, 0, {}});
  r.data_ = static_cast<const uint8_t*>(m);
  const ShardHeader& h = r.h_;
  if (std::memcmp(r.data_, kShardMagic, 8) != 0) return bad("not a sheaf shard (wrong magic bytes)", 0);
  uint32_t version;
  std::memcpy(&version, r.data_ + 8, 4);
  // The header's checksums sit after the fields they cover: at byte 112 in
  // format 1, after the special ids in format 2. An unknown version is
  // reported only once the format-1 checksum says the version is intact.
  if (version == kShardFormat && r.size_ < kShardHeaderSize + 8)
    return bad("the file has " + std::to_string(r.size_) + " bytes, less than a header and a checksum (truncated?)");
  uint64_t covered = version == kShardFormat ? offsetof(ShardHeader, header_checksum) : kShardHeaderFields;
  uint64_t want_xxh;
  uint32_t want_crc;
  std::memcpy(&want_xxh, r.data_ + covered, 8);
  std::memcpy(&want_crc, r.data_ + covered + 8, 4);
  if (XXH3_64bits(r.data_, covered) != want_xxh ||
      shard_crc32(r.data_, covered) != want_crc)
    return bad("the header checksum does not match", covered);
  if (version != 1 && version != kShardFormat)
    return bad("format version " + std::to_string(version) + " is not 1 or " + std::to_string(kShardFormat) +
                   " (a newer sheaf wrote it?)",
               8);
  uint64_t header_size = shard_header_size(version);
  if (version == 1) {
    std::memcpy(&r.h_, r.data_, kShardHeaderFields);
    for (int k = 0; k < 4; ++k) r.h_.source_specials[k] = r.h_.target_specials[k] = kUnknownSpecial;
    r.h_.header_checksum = want_xxh;
    r.h_.header_crc32 = want_crc;
  } else {
    std::memcpy(&r.h_, r.data_, sizeof r.h_);
  }
  if (h.id_width != 2 && h.id_width != 4) return bad("id width must be 2 or 4", 12);
  // Values this version does not define are refused, not ignored: a reader
  // that ignored them would misread a shard of a later format.
  if (h.order != kInputOrder && h.order != kLengthOrder)
    return bad("unknown order value " + std::to_string(h.order), offsetof(ShardHeader, order));
  if ((h.flags & ~uint32_t{kHasBos | kHasEos}) != 0)
    return bad("unknown flag bits " + std::to_string(h.flags), offsetof(ShardHeader, flags));
  if (h.reserved != 0) return bad("the reserved header bytes are not zero", offsetof(ShardHeader, reserved));
  if (h.file_size != r.size_)
    return bad("the header says " + std::to_string(h.file_size) + " bytes, the file has " + std::to_string(r.size_) + " (truncated?)");
  uint64_t body_end = r.size_ - 8;
  // Each array must sit inside the body, aligned, with room for its size.
  auto check = [&](uint64_t pos, uint64_t count, uint64_t width, const char* what) -> Status {
    if (pos % kShardAlign != 0 || pos < header_size || pos > body_end) return bad(std::string(what) + " is misplaced");
    if (width != 0 && count > (body_end - pos) / width) return bad(std::string(what) + " runs past the end of the file");
    return {};
  };
  if (h.pairs > (body_end / 8)) return bad("the pair count is larger than the file can hold");
  SHEAF_TRY(check(h.source_offsets, h.pairs + 1, 8, "the source offsets"));
  SHEAF_TRY(check(h.source_ids, h.source_count, h.id_width, "the source ids"));
  SHEAF_TRY(check(h.target_offsets, h.pairs + 1, 8, "the target offsets"));
  SHEAF_TRY(check(h.target_ids, h.target_count, h.id_width, "the target ids"));
  // The four arrays must not overlap (each was checked to fit in the body).
  struct Span {
    uint64_t begin, end;
  } spans[4] = {{h.source_offsets, h.source_offsets + (h.pairs + 1) * 8},
                {h.source_ids, h.source_ids + h.source_count * h.id_width},
                {h.target_offsets, h.target_offsets + (h.pairs + 1) * 8},
                {h.target_ids, h.target_ids + h.target_count * h.id_width}};
  std::sort(std::begin(spans), std::end(spans), [](const Span& a, const Span& b) { return a.begin < b.begin; });
  for (int i = 0; i + 1 < 4; ++i)
    if (spans[i].end > spans[i + 1].begin) return bad("two arrays overlap", spans[i + 1].begin);
  uint64_t sum;
  std::memcpy(&sum, r.data_ + body_end, 8);
  if (XXH3_64bits(r.data_ + header_size, body_end - header_size) != sum ||
      shard_crc32(r.data_ + header_size, body_end - header_size) != h.body_crc32)
    return bad("the body checksum does not match (a damaged byte?)", body_end);
  for (int side = 0; side < 2; ++side) {
    uint64_t pos = side ? h.target_offsets : h.source_offsets;
    uint64_t count = side ? h.target_count : h.source_count;
    uint64_t prev = 0;
    for (uint64_t i = 0; i <= h.pairs; ++i) {
      uint64_t v;
      std::memcpy(&v, r.data_ + pos + i * 8, 8);
      if (v < prev || v > count || (i == 0 && v != 0)) return bad("the offsets are not in order", pos + i * 8);
      prev = v;
    }
    if (prev != count) return bad("the offsets do not end at the id count", pos + h.pairs * 8);
  }
  return r;
}

void ShardReader::ids(uint64_t i, int side, std::vector<uint32_t>& out) const {
  uint64_t off = side ? h_.target_offsets : h_.source_offsets;
  uint64_t base = side ? h_.target_ids : h_.source_ids;
  uint64_t a, b;
  std::memcpy(&a, data_ + off + i * 8, 8);
  std::memcpy(&b, data_ + off + (i + 1) * 8, 8);
  out.clear();
  for (uint64_t k = a; k < b; ++k) {
    if (h_.id_width == 2) {
      uint16_t v;
      std::memcpy(&v, data_ + base + k * 2, 2);
      out.push_back(v);
    } else {
      uint32_t v;
      std::memcpy(&v, data_ + base + k * 4, 4);
      out.push_back(v);
    }
  }
}

uint32_t ShardReader::max_id(int side) const {
  uint64_t base = side ? h_.target_ids : h_.source_ids, count = side ? h_.target_count : h_.source_count;
  uint32_t m = 0;
  for (uint64_t k = 0; k < count; ++k) {
    uint32_t v;
    if (h_.id_width == 2) {
      uint16_t s;
      std::memcpy(&s, data_ + base + k * 2, 2);
      v = s;
    } else {
      std::memcpy(&v, data_ + base + k * 4, 4);
    }
    m = std::max(m, v);
  }
  return m;
}

}  // namespace sheaf
