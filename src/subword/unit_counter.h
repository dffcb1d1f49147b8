// UnitCounter: counts distinct word units (byte strings) in a flat
// open-addressing table keyed by their XXH3-64 hash. A unit of up to 16 bytes
// (most of them) is kept in its slot, a longer one in an arena; equal hashes
// are confirmed by comparing bytes, so counts are exact. add() takes a batch
// of units hashed beforehand and prefetches slots a few units ahead, which
// hides most of the cost of a table of millions of units.
// Counting in parallel: the trainer gives each counter one partition of the
// hash space (partition_of), so every unit has exactly one counter and no
// tables need merging afterwards.
// Not thread-safe: one thread at a time per counter.
#pragma once

#include <cstdint>
#include <span>
#include <string>
#include <string_view>

#include "core/huge_pages.h"

namespace sheaf {

// A unit of some text: its hash and where it is in the text.
struct HashedUnit {
  uint64_t hash;
  uint32_t offset, length;
};

class UnitCounter {
 public:
  UnitCounter() : slots_(1 << 16) {}

  static uint64_t hash(std::string_view unit);
  // Which of `parts` counters counts a unit of this hash. Uses the high half
  // of the hash, so the slots of one partition's table stay evenly used.
  static size_t partition_of(uint64_t hash, size_t parts) { return static_cast<size_t>(hash >> 32) % parts; }

  void add(std::string_view unit, uint64_t n = 1) { add_hashed(unit, hash(unit), n); }
  // Adds one occurrence of each unit of `text`.
  void add(std::string_view text, std::span<const HashedUnit> units);
  size_t size() const { return size_; }
  // Frees the table: the counter holds no memory and is not used again.
  void release() {
    HugeVector<Slot>().swap(slots_);
    std::string().swap(arena_);
    size_ = 0;
  }
  // Calls fn(unit, count) for every distinct unit, in no particular order.
  template <typename Fn>
  void each(Fn&& fn) const {
    for (const Slot& s : slots_)
      if (s.count) fn(bytes(s), s.count);
  }

 private:
  static constexpr uint32_t kInline = 16;
  struct Slot {
    uint64_t count = 0;  // 0 = empty
    uint32_t tag = 0;    // high half of the hash
    uint32_t length = 0;
    union {
      char inline_bytes[kInline];
      uint64_t offset;  // into arena_, when length > kInline
    };
  };
  std::string_view bytes(const Slot& s) const {
    return s.length <= kInline ? std::string_view(s.inline_bytes, s.length)
                               : std::string_view(arena_.data() + s.offset, s.length);
  }
  void add_hashed(std::string_view unit, uint64_t hash, uint64_t n);
  void grow();
  HugeVector<Slot> slots_;
  std::string arena_;
  size_t size_ = 0;
};

}  // namespace sheaf
