#include "subword/unit_counter.h"

#include <xxhash.h>

#include <cstring>

namespace sheaf {

void UnitCounter::add(std::string_view unit, uint64_t n) { add_hashed(unit, XXH3_64bits(unit.data(), unit.size()), n); }

void UnitCounter::add_hashed(std::string_view unit, uint64_t hash, uint64_t n) {
  if ((size_ + 1) * 4 > slots_.size() * 3) grow();
  size_t mask = slots_.size() - 1;
  for (size_t i = hash & mask;; i = (i + 1) & mask) {
    Slot& s = slots_[i];
    if (s.count == 0) {
      s.hash = hash;
      s.count = n;
      s.offset = arena_.size();
      s.length = static_cast<uint32_t>(unit.size());
      arena_.append(unit);
      ++size_;
      return;
    }
    if (s.hash == hash && s.length == unit.size() && std::memcmp(arena_.data() + s.offset, unit.data(), unit.size()) == 0) {
      s.count += n;
      return;
    }
  }
}

void UnitCounter::grow() {
  std::vector<Slot> old(slots_.size() * 2);
  old.swap(slots_);
  size_t mask = slots_.size() - 1;
  for (const Slot& s : old) {
    if (s.count == 0) continue;
    size_t i = s.hash & mask;
    while (slots_[i].count != 0) i = (i + 1) & mask;
    slots_[i] = s;
  }
}

void UnitCounter::merge(const UnitCounter& other) {
  for (const Slot& s : other.slots_)
    if (s.count) add_hashed(std::string_view(other.arena_.data() + s.offset, s.length), s.hash, s.count);
}

}  // namespace sheaf
