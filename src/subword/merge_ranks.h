// MergeRanks: the rank of each merge of a vocabulary, by its pair of tokens,
// for the encoder's inner loop. A vocabulary of fewer than 2^21 tokens (any
// practical one) uses one 64-bit word a slot (left and right id, 21 bits
// each, and rank + 1 in 22 bits) in a table at most half full, so that the
// table of a 32,000-merge vocabulary takes 512 KiB and mostly stays in a
// core's cache; a larger vocabulary uses a PairMap. Read-only after
// construction: safe to share between threads.
#pragma once

#include <cstdint>
#include <vector>

#include "subword/pair_map.h"
#include "subword/vocabulary.h"

namespace sheaf {

class MergeRanks {
 public:
  // The first `merges` merges of `v`; a pair merged twice keeps its first rank.
  MergeRanks(const Vocabulary& v, size_t merges);
  // The rank of (left, right), or UINT32_MAX if it is not a merge.
  uint32_t find(uint32_t left, uint32_t right) const {
    if (!compact_) {
      const auto* slot = wide_.find(pair_key(left, right));
      return slot == nullptr ? UINT32_MAX : slot->value;
    }
    uint64_t tag = static_cast<uint64_t>(left) << 43 | static_cast<uint64_t>(right) << 22;
    for (size_t i = home(tag);; i = (i + 1) & mask_) {
      uint64_t s = slots_[i];
      if (s == 0) return UINT32_MAX;
      if ((s & ~kRank) == tag) return static_cast<uint32_t>(s & kRank) - 1;
    }
  }

 private:
  static constexpr uint64_t kRank = (uint64_t{1} << 22) - 1;
  size_t home(uint64_t tag) const { return static_cast<size_t>((tag * 0x9E3779B97F4A7C15ULL) >> shift_); }
  bool compact_ = false;
  std::vector<uint64_t> slots_;
  size_t mask_ = 0;
  int shift_ = 0;
  PairMap<uint32_t> wide_;
};

}  // namespace sheaf
