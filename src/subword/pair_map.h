// PairMap: a flat hash map from a pair of symbol ids to a small value, for
// the learner's pair counts and the encoder's merge ranks. Open addressing
// with linear probing and backward-shift deletion (no tombstones), so a map
// that forgets most of what it ever held stays small and its probes short.
// Keys are (left << 32 | right); the key ~0 (both ids 2^32 - 1) is reserved.
// Not thread-safe for writes; concurrent find() on an unchanging map is fine.
#pragma once

#include <bit>
#include <cstddef>
#include <cstdint>
#include <vector>

#include "core/huge_pages.h"

namespace sheaf {

inline uint64_t pair_key(uint32_t left, uint32_t right) { return (static_cast<uint64_t>(left) << 32) | right; }

template <typename Value>
class PairMap {
 public:
  struct Slot {
    uint64_t key;
    Value value;
  };
  static constexpr uint64_t kEmpty = ~uint64_t{0};

  explicit PairMap(size_t expected = 0) {
    size_t n = 1 << 10;
    while (n * 7 < expected * 10) n *= 2;
    rehash(n);
  }

  Slot* find(uint64_t k) {
    for (size_t i = home(k);; i = (i + 1) & mask_) {
      if (slots_[i].key == k) return &slots_[i];
      if (slots_[i].key == kEmpty) return nullptr;
    }
  }
  const Slot* find(uint64_t k) const { return const_cast<PairMap*>(this)->find(k); }
  // The slot of `k`, value-initialized if it was absent (`created` says so).
  // Invalidates other slot pointers.
  Slot* insert(uint64_t k, bool& created) {
    if ((size_ + 1) * 10 > slots_.size() * 7) rehash(slots_.size() * 2);
    for (size_t i = home(k);; i = (i + 1) & mask_) {
      if (slots_[i].key == k) {
        created = false;
        return &slots_[i];
      }
      if (slots_[i].key == kEmpty) {
        slots_[i] = Slot{k, Value{}};
        ++size_;
        created = true;
        return &slots_[i];
      }
    }
  }
  // Invalidates other slot pointers.
  void erase(Slot* s) {
    size_t i = static_cast<size_t>(s - slots_.data());
    for (size_t j = (i + 1) & mask_; slots_[j].key != kEmpty; j = (j + 1) & mask_) {
      size_t h = home(slots_[j].key);
      // Slot j moves back into the hole unless its home lies cyclically in (i, j].
      bool stays = i <= j ? (h > i && h <= j) : (h > i || h <= j);
      if (!stays) {
        slots_[i] = slots_[j];
        i = j;
      }
    }
    slots_[i].key = kEmpty;
    --size_;
  }
  template <typename Fn>
  void each(Fn&& fn) {
    for (Slot& s : slots_)
      if (s.key != kEmpty) fn(s);
  }

 private:
  size_t home(uint64_t k) const { return static_cast<size_t>((k * 0x9E3779B97F4A7C15ULL) >> shift_); }
  void rehash(size_t n) {
    HugeVector<Slot> old(n, Slot{kEmpty, Value{}});
    old.swap(slots_);
    mask_ = n - 1;
    shift_ = 64 - std::countr_zero(n);
    for (const Slot& s : old) {
      if (s.key == kEmpty) continue;
      size_t i = home(s.key);
      while (slots_[i].key != kEmpty) i = (i + 1) & mask_;
      slots_[i] = s;
    }
  }
  HugeVector<Slot> slots_;
  size_t size_ = 0, mask_ = 0;
  int shift_ = 0;
};

}  // namespace sheaf
