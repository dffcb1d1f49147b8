// NearDupBandTable: one band's keys of kept pairs in the near-dup stage,
// each with the index of its kept pair. In a header (not near_dup.cc) so
// that tests can put chosen keys into it directly.
//
// 8-byte slots: open addressing, Robin Hood linear probing, doubling at 3/4
// load. Entries stand in order of their home slot, each no nearer the start
// than its home, so a lookup stops at the first slot whose entry is nearer
// its home than the probe (a miss, the common case, usually reads one cache
// line), and an insert puts the entry where that lookup stopped and moves
// the rest of the run one slot on (a short copy, not a chain of swaps).
//
// A table of 2^q slots keeps the top 58 bits of a key without storing all
// of them: the top q bits are the home slot, and a slot holds
//   [distance from home + 1: 6 bits][the next 58 - q key bits][kept: q bits]
// (0 = empty). The kept pair's index fits in q bits because each kept pair
// puts exactly one key in every band's table, so the index is below the
// band's count, below 3/4 of 2^q. On doubling, the home slot (position -
// distance) and the stored bits give back the 58 bits, and one more of them
// moves from the slot into the home. Two keys are taken for equal when
// their top 58 bits are: a false match needs a 58-bit collision within a
// band (docs/near-duplicates.md has the arithmetic).
//
// Keys that do not fit: an entry whose distance from home would not fit in
// its 6 bits (it, or an entry it would push on, would stand 64 or more
// slots from home), or whose insert would have to move more than kMaxMove
// entries, goes into a small overflow map of whole 58-bit keys instead.
// Random keys at 3/4 load essentially never do (the map stays empty on
// every measured corpus); keys made to share home slots (crafted input) do.
// The table never grows for such keys, only with the band's count, so:
//   - a lookup reads at most 64 slots, then the overflow map if it is not
//     empty (a balanced tree: O(log n) whatever the keys; a hash map could
//     be attacked the same way as the table);
//   - an insert moves at most kMaxMove slots;
//   - every key is in exactly one of the two, so the overflow map never
//     holds more keys than the band has, and the band's memory is at most
//     8 x 2^q bytes (2^q <= max(4096, 8/3 x count)) plus kOverflowNodeBytes
//     per overflowed key. Nothing is ever dropped: answers are the same as
//     with an exact set of 58-bit keys.
// A doubling puts overflowed keys back into the table where they now fit.
#pragma once

#include <cstdint>
#include <map>

#include "core/huge_pages.h"

namespace sheaf {

class NearDupBandTable {
 public:
  // Where a lookup stopped: the slot a missing key would take, and its
  // distance + 1 there. Valid for insert() until the table changes.
  struct Spot {
    size_t pos = 0;
    uint64_t d = 0;
  };

  // Most entries one insert may move along (8 KiB of slots).
  static constexpr size_t kMaxMove = 1024;
  // What one key in the overflow map costs: a libstdc++ red-black tree node
  // (32 bytes of links and colour, 16 of key and value) in a 64-byte malloc
  // chunk.
  static constexpr size_t kOverflowNodeBytes = 64;

  NearDupBandTable() : at_(kInitialLog2), slots_(at_.size()) {}

  // The kept pair whose key agrees with `key` in its top 58 bits, or -1
  // with `spot` set to where it would go.
  int64_t find(uint64_t key, Spot& spot) const {
    int64_t r = look(slots_, at_, key >> kDistBits, spot);
    if (r >= 0 || overflow_.empty()) return r;
    auto it = overflow_.find(key >> kDistBits);
    return it == overflow_.end() ? -1 : static_cast<int64_t>(it->second);
  }
  // Starts loading the key's home slot (the tables are far larger than the
  // caches; a pair's lookups are issued a few pairs ahead).
  void prefetch(uint64_t key) const { __builtin_prefetch(&slots_[at_.home(key >> kDistBits)]); }
  // Inserts a key that find() did not find, for kept pair `kept` (kept
  // pairs are numbered 0, 1, 2, ... as they are inserted, so `kept` is the
  // band's count before this insert); `spot` is what that find() gave, the
  // table unchanged since.
  void insert(uint64_t key, uint64_t kept, Spot spot) {
    uint64_t k = key >> kDistBits;
    if ((size_ + 1) * 4 > slots_.size() * 3) {
      grow();
      look(slots_, at_, k, spot);
    }
    if (kept > at_.idmask || !shift_in(slots_, at_, k, kept, spot)) overflow_.emplace(k, kept);
    ++size_;
  }
  size_t memory_bytes() const { return slots_.capacity() * sizeof(uint64_t) + overflow_.size() * kOverflowNodeBytes; }
  // Keys held (table and overflow), table slots, keys in the overflow map.
  size_t size() const { return size_; }
  size_t slots() const { return slots_.size(); }
  size_t overflowed() const { return overflow_.size(); }

 private:
  static constexpr int kDistBits = 6, kDistShift = 64 - kDistBits, kInitialLog2 = 12;
  static constexpr uint64_t kMaxStored = (uint64_t{1} << kDistBits) - 1;  // distance + 1
  static constexpr uint64_t kOneFurther = uint64_t{1} << kDistShift;

  // Where the bits go in a table of 2^q slots.
  struct Layout {
    explicit Layout(int log2)
        : q(log2),
          w(64 - kDistBits - log2),
          mask((size_t{1} << log2) - 1),
          wmask((uint64_t{1} << w) - 1),
          idmask((uint64_t{1} << log2) - 1) {}
    size_t size() const { return mask + 1; }
    size_t home(uint64_t k) const { return static_cast<size_t>(k >> w); }
    int q, w;
    size_t mask;
    uint64_t wmask, idmask;
  };

  // Looks up the 58-bit key k in the slots: the kept index, or -1 and where
  // k would go. Stops within 64 slots: no entry stands further from home.
  static int64_t look(const HugeVector<uint64_t>& t, const Layout& at, uint64_t k, Spot& spot) {
    size_t i = at.home(k);
    uint64_t rem = k & at.wmask;
    for (uint64_t d = 1;; ++d, i = (i + 1) & at.mask) {
      uint64_t s = t[i];
      uint64_t sd = s >> kDistShift;
      if (sd < d) {  // empty (0), or an entry nearer its home: ours would be here
        spot = Spot{i, d};
        return -1;
      }
      if (sd == d && ((s >> at.q) & at.wmask) == rem) return static_cast<int64_t>(s & at.idmask);
    }
  }
  // Puts (k, kept) at `spot` and moves the entries from there to the next
  // empty slot one slot on. False, with nothing changed, when a distance
  // would not fit in its 6 bits or more than kMaxMove entries would move.
  static bool shift_in(HugeVector<uint64_t>& t, const Layout& at, uint64_t k, uint64_t kept, Spot spot) {
    if (spot.d > kMaxStored) return false;
    size_t e = spot.pos, moved = 0;
    for (uint64_t s; (s = t[e]) != 0; e = (e + 1) & at.mask)
      if ((s >> kDistShift) == kMaxStored || ++moved > kMaxMove) return false;
    for (; e != spot.pos; e = (e - 1) & at.mask) t[e] = t[(e - 1) & at.mask] + kOneFurther;
    t[spot.pos] = (spot.d << kDistShift) | ((k & at.wmask) << at.q) | kept;
    return true;
  }
  // Doubles the table. An entry that does not fit in the bigger one goes
  // to the overflow map; an overflowed key that now fits comes back.
  void grow() {
    Layout to(at_.q + 1);
    HugeVector<uint64_t> bigger(to.size());
    for (size_t i = 0; i < slots_.size(); ++i) {
      uint64_t s = slots_[i];
      if (s == 0) continue;
      // The 58-bit key from the home slot (position - distance) and the
      // stored bits; the kept index as it is.
      size_t home = (i - static_cast<size_t>((s >> kDistShift) - 1)) & at_.mask;
      uint64_t k = (static_cast<uint64_t>(home) << at_.w) | ((s >> at_.q) & at_.wmask);
      Spot spot;
      look(bigger, to, k, spot);
      if (!shift_in(bigger, to, k, s & at_.idmask, spot)) overflow_.emplace(k, s & at_.idmask);
    }
    for (auto it = overflow_.begin(); it != overflow_.end();) {
      Spot spot;
      if (it->second <= to.idmask && look(bigger, to, it->first, spot) < 0 &&
          shift_in(bigger, to, it->first, it->second, spot))
        it = overflow_.erase(it);
      else
        ++it;
    }
    at_ = to;
    slots_.swap(bigger);
  }

  Layout at_;
  HugeVector<uint64_t> slots_;
  size_t size_ = 0;  // keys held, in the slots and in overflow_
  std::map<uint64_t, uint64_t> overflow_;  // 58-bit key -> kept pair, for keys the slots cannot hold
};

}  // namespace sheaf
