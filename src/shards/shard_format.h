// The shard file format (docs/shard-format.md is the specification).
//
// A shard holds the token ids of some pairs of one split: a little-endian
// header (160 bytes in format 2, 128 in format 1), then per side an offsets
// array ((pairs + 1) x u64) and a flat id array (u16 or u32), each starting
// at a multiple of 64 bytes, then the XXH3-64 of everything between the
// header and itself. CRC-32s of the header and body let readers with only
// zlib (Python's standard library) detect damage too. Format 2 adds the
// special ids of each side's vocabulary (pad, unknown, bos, eos), so that a
// training loop pads and stops without the vocabulary file; readers accept
// format 1 too (its special ids are then unknown).
#pragma once

#include <cstdint>
#include <cstring>

#include <zlib.h>

namespace sheaf {

inline constexpr char kShardMagic[8] = {'s', 'h', 'f', 'i', 'd', 's', 0x1A, 0x00};
inline constexpr uint32_t kShardFormat = 2;
inline constexpr uint64_t kShardHeaderSize = 160;    // format 2
inline constexpr uint64_t kShardHeaderSizeV1 = 128;  // format 1
inline constexpr uint64_t kShardHeaderFields = 112;  // bytes both formats share
inline constexpr uint32_t kUnknownSpecial = UINT32_MAX;  // a format 1 shard's special ids

inline uint64_t shard_header_size(uint32_t version) { return version == 1 ? kShardHeaderSizeV1 : kShardHeaderSize; }
inline constexpr uint64_t kShardAlign = 64;

// CRC-32 (zlib's polynomial, as Python's zlib.crc32) of n bytes. zlib's
// crc32_z takes a size_t length, so a body of 4 GiB or more is checksummed
// whole, not modulo 2^32 as a cast to crc32()'s 32-bit length would do.
inline uint32_t shard_crc32(const void* data, uint64_t n) {
  return static_cast<uint32_t>(crc32_z(0, static_cast<const Bytef*>(data), static_cast<z_size_t>(n)));
}

enum ShardOrder : uint32_t { kInputOrder = 0, kLengthOrder = 1 };
enum ShardFlags : uint32_t { kHasBos = 1, kHasEos = 2 };

#pragma pack(push, 1)
struct ShardHeader {
  char magic[8];
  uint32_t version;
  uint32_t id_width;       // bytes per id: 2 or 4
  uint64_t pairs;
  uint64_t source_vocab;   // XXH3-64 checksums of the vocabularies
  uint64_t target_vocab;
  uint32_t order;          // ShardOrder
  uint32_t flags;          // ShardFlags
  uint64_t source_offsets; // byte positions in the file
  uint64_t source_ids;
  uint64_t source_count;   // ids on the source side
  uint64_t target_offsets;
  uint64_t target_ids;
  uint64_t target_count;
  uint64_t file_size;
  uint32_t shard_index;    // position of this shard within its split
  uint32_t body_crc32;     // CRC-32 (zlib) of the body, for readers without XXH3
  // Format 2 only (format 1 has its checksums here):
  uint32_t source_specials[4];  // ids of pad, unknown, bos, eos (Special order)
  uint32_t target_specials[4];
  uint64_t header_checksum;  // XXH3-64 of bytes 0..143 (format 1: 0..111, at byte 112)
  uint32_t header_crc32;   // CRC-32 (zlib) of bytes 0..143 (format 1: 0..111, at byte 120)
  uint32_t reserved;       // zero
};
#pragma pack(pop)
static_assert(sizeof(ShardHeader) == kShardHeaderSize, "shard header is 160 bytes");

inline uint64_t align_up(uint64_t v) { return (v + kShardAlign - 1) / kShardAlign * kShardAlign; }

}  // namespace sheaf
