#include "subword/merge_ranks.h"

#include <bit>

namespace sheaf {

MergeRanks::MergeRanks(const Vocabulary& v, size_t merges) : wide_(0) {
  compact_ = v.size() < (size_t{1} << 21) && merges < kRank;
  if (compact_) {
    size_t n = 16;
    while (n < merges * 2) n *= 2;
    slots_.assign(n, 0);
    mask_ = n - 1;
    shift_ = 64 - std::countr_zero(n);
  }
  for (size_t r = 0; r < merges; ++r) {
    const Token& t = v.token(v.first_merge() + static_cast<uint32_t>(r));
    if (find(t.left, t.right) != UINT32_MAX) continue;  // a repeated pair keeps its first rank
    if (!compact_) {
      bool created;
      wide_.insert(pair_key(t.left, t.right), created)->value = static_cast<uint32_t>(r);
      continue;
    }
    uint64_t tag = static_cast<uint64_t>(t.left) << 43 | static_cast<uint64_t>(t.right) << 22;
    size_t i = home(tag);
    while (slots_[i] != 0) i = (i + 1) & mask_;
    slots_[i] = tag | (r + 1);
  }
}

}  // namespace sheaf
