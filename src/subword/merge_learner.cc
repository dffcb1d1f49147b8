#include "subword/merge_learner.h"

#include <oneapi/tbb/parallel_pipeline.h>
#include <oneapi/tbb/task_arena.h>

#include <algorithm>
#include <memory>

#include "core/batch_pool.h"
#include "core/tsan.h"
#include "subword/pair_map.h"

namespace sheaf {

namespace {

inline uint64_t key(uint32_t a, uint32_t b) { return pair_key(a, b); }
inline SymbolPair unkey(uint64_t k) { return {static_cast<uint32_t>(k >> 32), static_cast<uint32_t>(k)}; }

// A pair's count, the index of its list of holder words and the last word
// put on that list.
struct PairInfo {
  int64_t count;
  uint32_t list;
  uint32_t last;
};

// Holder lists are strictly ascending word handles (words are counted in
// handle order, and a list gets words only in the merge that makes its pair,
// in holder order), kept as the gaps between them in LEB128 (7 bits a byte,
// high bit: more follows): about a third of 4 bytes a word, which was the
// learner's largest table (117 of 440 MiB on the 200 MB benchmark corpus).
void append_gap(std::vector<uint8_t>& list, uint32_t gap) {
  while (gap >= 0x80) {
    list.push_back(static_cast<uint8_t>(gap | 0x80));
    gap >>= 7;
  }
  list.push_back(static_cast<uint8_t>(gap));
}
void decode_gaps(const std::vector<uint8_t>& list, std::vector<uint32_t>& out) {
  out.clear();
  uint32_t at = 0;
  for (size_t i = 0; i < list.size();) {
    uint32_t gap = 0;
    for (int shift = 0;; shift += 7) {
      uint8_t b = list[i++];
      gap |= static_cast<uint32_t>(b & 0x7F) << shift;
      if (!(b & 0x80)) break;
    }
    at += gap;
    out.push_back(at);
  }
}
using PairTable = PairMap<PairInfo>;

struct Entry {
  int64_t count;
  uint64_t pair;
};

// Heap order: higher counts first, then the pair that the tie rule puts first.
struct Worse {
  const LearnOptions* o;
  bool operator()(const Entry& a, const Entry& b) const {
    if (a.count != b.count) return a.count < b.count;
    if (o->before) return o->before(unkey(b.pair), unkey(a.pair));
    return b.pair < a.pair;
  }
};

// The learner's state: pair counts, holder lists, the heap.
template <typename Store>
class Learner {
 public:
  using Sym = typename Store::Symbol;
  Learner(Store& words, const LearnOptions& o) : words_(words), o_(o), min_(static_cast<int64_t>(o.min_count)) {
    if (min_ < 1) min_ = 1;
    if (o.threads > 1) arena_ = std::make_unique<tbb::task_arena>(o.threads);
  }

  std::vector<Merge> run() {
    // A symbol at or above first_new_id could make a merge's new pair join
    // a list out of handle order, which the gaps cannot hold.
    for (size_t i = 0; i < words_.size(); ++i)
      for (uint32_t s : words_.word(i))
        if (s >= o_.first_new_id) return {};
    count_initial_pairs();
    std::vector<Merge> merges;
    uint32_t next_id = o_.first_new_id;
    while (merges.size() < o_.max_merges && !heap_.empty()) {
      std::pop_heap(heap_.begin(), heap_.end(), Worse{&o_});
      Entry top = heap_.back();
      heap_.pop_back();
      PairTable::Slot* slot = pairs_.find(top.pair);
      if (slot == nullptr) continue;  // fell below min_count
      if (slot->value.count != top.count) {  // stale: counts only fall, so queue the pair again
        push(slot->value.count, top.pair);
        continue;
      }
      SymbolPair pr = unkey(top.pair);
      uint32_t z = next_id++;
      merges.push_back({pr.left, pr.right, z, static_cast<uint64_t>(top.count)});
      if (o_.on_merge) o_.on_merge(merges.back());
      decode_gaps(lists_[slot->value.list], holders_);
      release_list(slot->value.list);
      pairs_.erase(slot);
      fresh_.clear();
      merge_in_words(holders_, pr.left, pr.right, z);
      // Pairs made by this merge are complete now: keep those that could
      // still be merged.
      for (uint64_t k : fresh_) {
        PairTable::Slot* s = pairs_.find(k);
        if (s->value.count < min_) {
          release_list(s->value.list);
          pairs_.erase(s);
        } else {
          push(s->value.count, k);
        }
      }
      if (o_.progress && merges.size() % 1000 == 0) o_.progress(merges.size(), static_cast<uint64_t>(top.count));
      if (o_.stop && merges.size() % 256 == 0 && o_.stop()) break;
    }
    return merges;
  }

 private:
  bool mergeable(uint32_t s) const { return s >= o_.first_mergeable; }

  void push(int64_t count, uint64_t k) {
    heap_.push_back({count, k});
    std::push_heap(heap_.begin(), heap_.end(), Worse{&o_});
  }

  uint32_t new_list() {
    if (!free_lists_.empty()) {
      uint32_t i = free_lists_.back();
      free_lists_.pop_back();
      return i;
    }
    lists_.emplace_back();
    return static_cast<uint32_t>(lists_.size() - 1);
  }
  void release_list(uint32_t i) {
    std::vector<uint8_t>().swap(lists_[i]);
    free_lists_.push_back(i);
  }

  // Adds `c` occurrences of pair k held by word w; records pairs it creates
  // in fresh_ when `track` is set.
  void add(uint64_t k, int64_t c, uint32_t w, bool track) {
    bool created;
    PairTable::Slot* s = pairs_.insert(k, created);
    if (created) {
      s->value.list = new_list();
      if (track) fresh_.push_back(k);
    }
    s->value.count += c;
    auto& list = lists_[s->value.list];
    if (list.empty()) {
      append_gap(list, w);
    } else if (s->value.last != w) {
      append_gap(list, w - s->value.last);
    } else {
      return;
    }
    s->value.last = w;
  }
  void remove(uint64_t k, int64_t c) {
    PairTable::Slot* s = pairs_.find(k);
    if (s == nullptr) return;  // already forgotten: below min_count
    s->value.count -= c;
    if (s->value.count < min_) {
      release_list(s->value.list);
      pairs_.erase(s);
    }
  }

  void count_initial_pairs() {
    for (size_t i = 0; i < words_.size(); ++i) {
      typename Store::Handle w = words_.handle(i);
      auto s = words_.symbols(w);
      int64_t c = static_cast<int64_t>(words_.count(w));
      for (size_t i = 0; i + 1 < s.size(); ++i)
        if (mergeable(s[i]) && mergeable(s[i + 1])) add(key(s[i], s[i + 1]), c, w, false);
    }
    std::vector<uint64_t> rare;
    pairs_.each([&](PairTable::Slot& s) {
      if (s.value.count < min_) rare.push_back(s.key);
      else heap_.push_back({s.value.count, s.key});
    });
    for (uint64_t k : rare) {
      PairTable::Slot* s = pairs_.find(k);
      release_list(s->value.list);
      pairs_.erase(s);
    }
    std::make_heap(heap_.begin(), heap_.end(), Worse{&o_});
  }

  // A change to a pair's count found while rewriting words: `word` holds the
  // pair now, or is kRemoved for occurrences that are gone.
  struct Delta {
    uint64_t pair;
    int64_t count;
    typename Store::Handle word;
  };
  static constexpr typename Store::Handle kRemoved = UINT32_MAX;
  // What rewriting words needs of its own; one per block in flight.
  struct Block {
    size_t begin = 0, end = 0;
    std::vector<Delta> deltas;
    std::vector<Sym> old;
    std::vector<uint8_t> merged_old, merged_new;
  };
  static constexpr size_t kBlockWords = 8192;

  // Merges (a, b) into z in every holder word. Rewriting a word needs nothing
  // of the pair table, so large merges run as a pipeline: blocks of words
  // are rewritten in parallel while the count changes of earlier blocks are
  // applied in holder order. The table sees exactly the sequence of changes
  // of a serial run, so the result does not depend on the thread count.
  void merge_in_words(const std::vector<uint32_t>& holders, uint32_t a, uint32_t b, uint32_t z) {
    auto rewrite = [&](Block& blk) {
      blk.deltas.clear();
      // Holder lists are in ascending order; reading ahead hides most of
      // the cost of visiting words spread over memory.
      for (size_t i = blk.begin; i < blk.end; ++i) {
        if (i + 16 < blk.end) __builtin_prefetch(words_.address(holders[i + 16]));
        merge_in_word(holders[i], a, b, z, blk);
      }
    };
    if (!arena_ || holders.size() < 2 * kBlockWords) {
      serial_.begin = 0;
      serial_.end = holders.size();
      rewrite(serial_);
      apply(serial_.deltas);
      return;
    }
    size_t next = 0;
    arena_->execute([&] {
      free_.run_pipeline(
          tbb::make_filter<void, Block*>(tbb::filter_mode::serial_in_order,
                                         [&](tbb::flow_control& fc) -> Block* {
                                           TaskBody body;
                                           SerialTurn turn(&next);
                                           if (next >= holders.size()) {
                                             fc.stop();
                                             return nullptr;
                                           }
                                           Block* blk = free_.acquire();
                                           blk->begin = next;
                                           blk->end = next = std::min(holders.size(), next + kBlockWords);
                                           handoff_release(blk);
                                           return blk;
                                         }) &
              tbb::make_filter<Block*, Block*>(tbb::filter_mode::parallel,
                                               [&](Block* blk) {
                                                 TaskBody body;
                                                 handoff_acquire(blk);
                                                 rewrite(*blk);
                                                 handoff_release(blk);
                                                 return blk;
                                               }) &
              tbb::make_filter<Block*, void>(tbb::filter_mode::serial_in_order, [&](Block* blk) {
                TaskBody body;
                SerialTurn turn(this);
                handoff_acquire(blk);
                apply(blk->deltas);
                free_.release(blk);
              }));
    });
  }

  void apply(const std::vector<Delta>& deltas) {
    for (const Delta& d : deltas) {
      if (d.word == kRemoved) remove(d.pair, d.count);
      else add(d.pair, d.count, d.word, true);
    }
  }

  // Replaces the occurrences of (a, b) in word w by z, left to right, and
  // records the count changes of the pairs next to each occurrence only.
  // Touches word w and `blk` only: words of one holder list can be rewritten
  // in parallel.
  void merge_in_word(typename Store::Handle w, uint32_t a, uint32_t b, uint32_t z, Block& blk) {
    std::span<Sym> s = words_.symbols(w);
    size_t n = s.size(), first = 0;
    while (first + 1 < n && !(s[first] == a && s[first + 1] == b)) ++first;
    if (first + 1 >= n) return;  // an entry left from before an earlier merge changed the word
    auto& old = blk.old;
    auto& merged_old = blk.merged_old;
    auto& merged_new = blk.merged_new;
    old.assign(s.begin(), s.end());
    merged_old.assign(n, 0);
    merged_new.assign(n, 0);
    size_t m = first;
    for (size_t r = first; r < n;) {
      if (r + 1 < n && old[r] == a && old[r + 1] == b) {
        merged_old[r] = merged_old[r + 1] = 1;
        merged_new[m] = 1;
        s[m++] = static_cast<Sym>(z);
        r += 2;
      } else {
        s[m++] = old[r++];
      }
    }
    words_.set_length(w, static_cast<uint32_t>(m));
    int64_t c = static_cast<int64_t>(words_.count(w));
    uint64_t ab = key(a, b);
    // Pairs of the old word that touch an occurrence are gone...
    for (size_t j = first > 0 ? first - 1 : 0; j + 1 < n; ++j) {
      if (!(merged_old[j] | merged_old[j + 1])) continue;
      uint64_t k = key(old[j], old[j + 1]);
      if (k != ab && mergeable(old[j]) && mergeable(old[j + 1])) blk.deltas.push_back({k, c, kRemoved});
    }
    // ...and the new word's pairs that touch z are new.
    for (size_t j = first > 0 ? first - 1 : 0; j + 1 < m; ++j) {
      if (!(merged_new[j] | merged_new[j + 1])) continue;
      if (mergeable(s[j]) && mergeable(s[j + 1])) blk.deltas.push_back({key(s[j], s[j + 1]), c, w});
    }
  }

  Store& words_;
  const LearnOptions& o_;
  int64_t min_;
  PairTable pairs_;
  std::vector<std::vector<uint8_t>> lists_;  // gaps, see append_gap
  std::vector<uint32_t> holders_;              // the list of the pair being merged
  std::vector<uint32_t> free_lists_;
  std::vector<Entry> heap_;
  std::vector<uint64_t> fresh_;
  std::unique_ptr<tbb::task_arena> arena_;  // only with more than one thread
  Block serial_;              // for merges too small to share
  BatchPool<Block> free_{4};  // blocks in flight in a shared merge
};

}  // namespace

std::vector<Merge> learn_merges(WordList& words, const LearnOptions& o) { return Learner<WordList>(words, o).run(); }

std::vector<Merge> learn_merges(NarrowWordList& words, const LearnOptions& o) {
  LearnOptions narrow = o;
  uint64_t room = o.first_new_id < 65536 ? 65536 - uint64_t{o.first_new_id} : 0;
  narrow.max_merges = static_cast<size_t>(std::min<uint64_t>(o.max_merges, room));
  return Learner<NarrowWordList>(words, narrow).run();
}

}  // namespace sheaf
