#include "subword/unit_counter.h"

#include <xxhash.h>

#include <algorithm>
#include <cstring>

namespace sheaf {

uint64_t UnitCounter::hash(std::string_view unit) { return XXH3_64bits(unit.data(), unit.size()); }

void UnitCounter::add(std::string_view text, std::span<const HashedUnit> units) {
  constexpr size_t kAhead = 16;
  for (size_t k = 0; k < std::min(kAhead, units.size()); ++k)
    __builtin_prefetch(&slots_[units[k].hash & (slots_.size() - 1)]);
  for (size_t k = 0; k < units.size(); ++k) {
    if (k + kAhead < units.size()) __builtin_prefetch(&slots_[units[k + kAhead].hash & (slots_.size() - 1)]);
    const HashedUnit& u = units[k];
    add_hashed(text.substr(u.offset, u.length), u.hash, 1);
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

}  // namespace sheaf
