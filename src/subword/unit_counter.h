// UnitCounter: counts distinct word units (byte strings) in a flat
// open-addressing table keyed by their XXH3-64 hash. A unit of up to 16 bytes
// (most of them) is kept in its slot, a longer one in an arena; equal hashes
// are confirmed by comparing bytes, so counts are exact. add_units() takes
// all the units of a text at once and prefetches their slots before
// counting, which hides most of the cost of a table of millions of units.
// Not thread-safe: one counter per thread, merged afterwards.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "core/huge_pages.h"

namespace sheaf {

class UnitCounter {
 public:
  UnitCounter() : slots_(1 << 16) {}

  void add(std::string_view unit, uint64_t n = 1);
  // Adds every unit of `text`, given their end offsets (units.h's unit_ends).
  void add_units(std::string_view text, const std::vector<uint32_t>& ends);
  void merge(const UnitCounter& other);
  size_t size() const { return size_; }
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
    return s.length <= kInline ? std::string_view(s.inline_bytes, s.length) : std::string_view(arena_.data() + s.offset, s.length);
  }
  void add_hashed(std::string_view unit, uint64_t hash, uint64_t n);
  void grow();
  HugeVector<Slot> slots_;
  std::string arena_;
  size_t size_ = 0;
  std::vector<uint64_t> hashes_;  // add_units' scratch
};

}  // namespace sheaf
