// DedupTable: a compact open-addressing set of 64- or 128-bit hashes, each
// with the input line of its first occurrence. No strings are stored.
// Slots hold the hash words and a line number (16 bytes for 64-bit hashes,
// 24 for 128-bit); the table doubles when a new key would pass 3/4 load. Not thread-safe: the dedup
// stage calls it from its serial half only.
#pragma once

#include <cstdint>
#include <vector>

#include "core/huge_pages.h"

namespace sheaf {

template <int kWords>
class DedupTable {
 public:
  // The slots are allocated at the first insert: a table that is built but
  // never used (a spread run's reduce job) holds no memory.
  explicit DedupTable(size_t expected = 1 << 16) {
    while (first_cap_ < expected * 4 / 3 + 1) first_cap_ <<= 1;
  }

  // Inserts the key; returns 0 if it is new, else the line it was first seen on.
  // The table doubles when a new key would take it past 3/4 load, so its
  // size is a function of the number of keys alone (memory_bytes_after).
  uint64_t insert(const uint64_t* key, uint64_t line) {
    Slot s;
    for (int i = 0; i < kWords; ++i) s.h[i] = key[i];
    if (s.h[0] == 0) s.h[0] = 1;  // 0 marks an empty slot
    s.line = line;
    if (slots_.empty()) slots_.assign(first_cap_, Slot{});
    for (;;) {
      size_t mask = slots_.size() - 1;
      for (size_t i = s.h[0] & mask;; i = (i + 1) & mask) {
        Slot& t = slots_[i];
        if (same(t, s)) return t.line;
        if (t.h[0] != 0) continue;
        if ((size_ + 1) * 4 > slots_.size() * 3) break;  // full enough: grow, then look again
        t = s;
        ++size_;
        return 0;
      }
      grow();
    }
  }

  // memory_bytes() of a table built with `expected` after `distinct` keys
  // (a function of the count alone: the table doubles at 3/4 load).
  static size_t memory_bytes_after(uint64_t distinct, size_t expected = 1 << 16) {
    if (distinct == 0) return 0;
    size_t cap = 16;
    while (cap < expected * 4 / 3 + 1) cap <<= 1;
    while (distinct * 4 > cap * 3) cap <<= 1;
    return cap * sizeof(Slot);
  }

  size_t size() const { return size_; }
  size_t capacity() const { return slots_.size(); }
  size_t memory_bytes() const { return slots_.size() * sizeof(Slot); }

 private:
  struct Slot {
    uint64_t h[kWords] = {};
    uint64_t line = 0;
  };
  static bool same(const Slot& a, const Slot& b) {
    for (int i = 0; i < kWords; ++i)
      if (a.h[i] != b.h[i]) return false;
    return true;
  }
  void grow() {
    HugeVector<Slot> old;
    old.swap(slots_);
    slots_.assign(old.size() * 2, Slot{});
    size_t mask = slots_.size() - 1;
    for (const Slot& s : old) {
      if (s.h[0] == 0) continue;
      size_t i = s.h[0] & mask;
      while (slots_[i].h[0] != 0) i = (i + 1) & mask;
      slots_[i] = s;
    }
  }
  HugeVector<Slot> slots_;
  size_t size_ = 0;
  size_t first_cap_ = 16;
};

}  // namespace sheaf
