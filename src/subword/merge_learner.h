// MergeLearner: byte-pair-encoding merges learned from (symbol sequence,
// count) pairs, after Sennrich, Haddow & Birch (2016), Algorithm 1. It knows
// nothing of text: symbols are integer ids and the caller says how to order
// ties, so it can be checked against the paper's examples directly.
//
// Each step merges the most frequent adjacent pair of mergeable symbols into
// a new symbol (ids first_new_id, first_new_id + 1, ...), replacing its
// non-overlapping occurrences left to right in every word. It is incremental:
// pair counts in a flat table, an index from each pair to the words holding
// it, and a heap with lazy invalidation, so a step touches only the words
// that hold the merged pair, and in them only the pairs next to a merged
// occurrence.
// A pair that occurs fewer than `min_count` times can never be merged (an
// existing pair's count only falls; a pair is created only by the merge that
// makes its newer symbol), so such pairs are forgotten at once: they cost no
// index, no heap entry and no memory afterwards.
// Ties between pairs of equal count go to the pair for which `before(a, b)`
// is true (a strict weak order on pairs); the vocabulary uses the byte order
// of the merged tokens (docs/vocabulary-format.md). Learning stops after
// `max_merges` merges or when the best pair occurs fewer than `min_count`
// times. Deterministic: same input, same merges.
#pragma once

#include <cstdint>
#include <cstring>
#include <functional>
#include <limits>
#include <span>
#include <vector>

#include "core/huge_pages.h"

namespace sheaf {

// Word types with their counts, in one array: per word its length (32 bits),
// its count (64 bits) and its symbols, so that reading a word touches one
// place in memory. Learning shortens words in place. A word is named by its
// Handle (where it starts); index w = the w-th word added. Symbols are kept
// in `Sym`: 16 bits when every id is below 65,536 (NarrowWordList, any
// vocabulary of at most 65,536 tokens: half the memory of 32 bits, the
// learner's largest array), else 32 (WordList).
template <typename Sym>
class WordStore {
 public:
  using Handle = uint32_t;
  using Symbol = Sym;
  // False (and nothing added) when the array would pass 2^32 entries or a
  // symbol does not fit Sym.
  [[nodiscard]] bool add(std::span<const uint32_t> symbols, uint64_t count) {
    if (store_.size() + kHeader + symbols.size() > UINT32_MAX) return false;
    for (uint32_t x : symbols)
      if (x > std::numeric_limits<Sym>::max()) return false;
    starts_.push_back(static_cast<Handle>(store_.size()));
    store_.resize(store_.size() + kHeader);
    uint32_t n = static_cast<uint32_t>(symbols.size());
    std::memcpy(store_.data() + starts_.back(), &n, sizeof n);
    std::memcpy(store_.data() + starts_.back() + 4 / sizeof(Sym), &count, sizeof count);
    for (uint32_t x : symbols) store_.push_back(static_cast<Sym>(x));
    return true;
  }
  size_t size() const { return starts_.size(); }
  Handle handle(size_t w) const { return starts_[w]; }
  std::span<const Sym> word(size_t w) const { return symbols(starts_[w]); }

  uint64_t count(Handle h) const {
    uint64_t c;
    std::memcpy(&c, store_.data() + h + 4 / sizeof(Sym), sizeof c);
    return c;
  }
  std::span<Sym> symbols(Handle h) { return {store_.data() + h + kHeader, length(h)}; }
  std::span<const Sym> symbols(Handle h) const { return {store_.data() + h + kHeader, length(h)}; }
  void set_length(Handle h, uint32_t n) { std::memcpy(store_.data() + h, &n, sizeof n); }
  const Sym* address(Handle h) const { return store_.data() + h; }
  void reserve(size_t words, size_t symbols) {
    starts_.reserve(words);
    store_.reserve(words * kHeader + symbols);
  }

 private:
  static constexpr uint32_t kHeader = 12 / sizeof(Sym);  // length and count
  uint32_t length(Handle h) const {
    uint32_t n;
    std::memcpy(&n, store_.data() + h, sizeof n);
    return n;
  }
  HugeVector<Sym> store_;
  std::vector<Handle> starts_;
};
using WordList = WordStore<uint32_t>;
using NarrowWordList = WordStore<uint16_t>;

struct Merge {
  uint32_t left = 0, right = 0, result = 0;
  uint64_t count = 0;  // occurrences of the pair when it was merged
};

struct SymbolPair {
  uint32_t left, right;
};

struct LearnOptions {
  size_t max_merges = 0;
  uint64_t min_count = 2;
  uint32_t first_new_id = 0;
  uint32_t first_mergeable = 0;                               // smaller ids never merge (byte tokens)
  std::function<bool(SymbolPair, SymbolPair)> before;         // default: smaller ids first
  std::function<void(size_t done, uint64_t count)> progress;  // called every 1000 merges
  std::function<void(const Merge&)> on_merge;                 // called after each merge
  std::function<bool()> stop;                                 // asked every 256 merges: true ends learning
  int threads = 1;  // large merges rewrite words on this many threads; the result is the same
};

// Learns merges; `words` is rewritten in place to the merged symbols. With
// 16-bit symbols at most 65,536 - first_new_id merges are learned (new ids
// must fit). Every symbol of `words` must be below first_new_id (the
// holder lists count on it); when one is not, nothing is learned.
std::vector<Merge> learn_merges(WordList& words, const LearnOptions& o);
std::vector<Merge> learn_merges(NarrowWordList& words, const LearnOptions& o);

}  // namespace sheaf
