#include "subword/unit_counter.h"

#include <xxhash.h>

#include <cstring>

namespace sheaf {

void UnitCounter::add(std::string_view unit, uint64_t n) { add_hashed(unit, XXH3_64bits(unit.data(), unit.size()), n); }

void UnitCounter::add_units(std::string_view text, const std::vector<uint32_t>& ends) {
  hashes_.resize(ends.size());
  size_t mask = slots_.size() - 1;
  uint32_t from = 0;
  for (size_t k = 0; k < ends.size(); ++k) {
    hashes_[k] = XXH3_64bits(text.data() + from, ends[k] - from);
    __builtin_prefetch(&slots_[hashes_[k] & mask]);
    from = ends[k];
  }
  from = 0;
  for (size_t k = 0; k < ends.size(); ++k) {
    add_hashed(text.substr(from, ends[k] - from), hashes_[k], 1);
    from = ends[k];
  }
}

void UnitCounter::add_hashed(std::string_view unit, uint64_t hash, uint64_t n) {
  if ((size_ + 1) * 4 > slots_.size() * 3) grow();
  size_t mask = slots_.size() - 1;
  uint32_t tag = static_cast<uint32_t>(hash >> 32);
  for (size_t i = hash & mask;; i = (i + 1) & mask) {
    Slot& s = slots_[i];
    if (s.count == 0) {
      s.count = n;
      s.tag = tag;
      s.length = static_cast<uint32_t>(unit.size());
      if (unit.size() <= kInline) {
        std::memcpy(s.inline_bytes, unit.data(), unit.size());
      } else {
        s.offset = arena_.size();
        arena_.append(unit);
      }
      ++size_;
      return;
    }
    if (s.tag == tag && s.length == unit.size() && bytes(s) == unit) {
      s.count += n;
      return;
    }
  }
}

void UnitCounter::grow() {
  HugeVector<Slot> old(slots_.size() * 2);
  old.swap(slots_);
  size_t mask = slots_.size() - 1;
  for (const Slot& s : old) {
    if (s.count == 0) continue;
    std::string_view b = bytes(s);
    size_t i = XXH3_64bits(b.data(), b.size()) & mask;
    while (slots_[i].count != 0) i = (i + 1) & mask;
    slots_[i] = s;
  }
}

void UnitCounter::merge(const UnitCounter& other) {
  // Size the table first: inserting another table's slots in their order
  // into a smaller table that doubles on the way piles them into long runs
  // (linear probing meets keys sorted by their low hash bits).
  while ((size_ + other.size_) * 4 > slots_.size() * 3 || slots_.size() < other.slots_.size()) grow();
  for (const Slot& s : other.slots_)
    if (s.count) add(other.bytes(s), s.count);
}

}  // namespace sheaf
