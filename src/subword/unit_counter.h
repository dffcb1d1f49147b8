// UnitCounter: counts distinct word units (byte strings) in a flat
// open-addressing table keyed by their XXH3-64 hash, with the bytes kept in
// one arena; equal hashes are confirmed by comparing bytes, so counts are
// exact. Much cheaper than a node-based map of strings for millions of
// units. Not thread-safe: one counter per thread, merged afterwards.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

namespace sheaf {

class UnitCounter {
 public:
  UnitCounter() : slots_(1 << 16) {}

  void add(std::string_view unit, uint64_t n = 1);
  void merge(const UnitCounter& other);
  size_t size() const { return size_; }
  // Calls fn(unit, count) for every distinct unit, in no particular order.
  template <typename Fn>
  void each(Fn&& fn) const {
    for (const Slot& s : slots_)
      if (s.count) fn(std::string_view(arena_.data() + s.offset, s.length), s.count);
  }

 private:
  struct Slot {
    uint64_t hash = 0;
    uint64_t count = 0;  // 0 = empty
    uint64_t offset = 0;
    uint32_t length = 0;
  };
  void add_hashed(std::string_view unit, uint64_t hash, uint64_t n);
  void grow();
  std::vector<Slot> slots_;
  std::string arena_;
  size_t size_ = 0;
};

}  // namespace sheaf
