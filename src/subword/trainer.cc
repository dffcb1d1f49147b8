#include "subword/trainer.h"

#include <oneapi/tbb/enumerable_thread_specific.h>
#include <oneapi/tbb/parallel_pipeline.h>
#include <oneapi/tbb/task_arena.h>
#include <unicode/utf8.h>
#ifdef __GLIBC__
#include <malloc.h>  // malloc_trim
#endif

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstring>
#include <fstream>
#include <map>
#include <unordered_map>

#include "core/batch_pool.h"
#include "core/interrupt.h"
#include "core/text.h"
#include "core/utf8.h"
#include "core/tsan.h"
#include "io/line_blocks.h"
#include "subword/merge_learner.h"
#include "subword/unit_counter.h"
#include "subword/units.h"

namespace sheaf {

namespace {

// Word-unit counts in partitions of the hash space, one counter each.
class Counts {
 public:
  explicit Counts(size_t parts) : parts_(parts) {}
  UnitCounter& part(size_t p) { return parts_[p]; }
  size_t parts() const { return parts_.size(); }
  size_t size() const {
    size_t n = 0;
    for (const auto& c : parts_) n += c.size();
    return n;
  }
  template <typename Fn>
  void each(Fn&& fn) const {
    for (const auto& c : parts_) c.each(fn);
  }
  void clear() { std::vector<UnitCounter>().swap(parts_); }
  // each(), freeing each partition's table once it is read: the word store
  // fills as the counts empty, so the two are not held whole at once.
  template <typename Fn>
  void drain(Fn&& fn) {
    for (auto& c : parts_) {
      c.each(fn);
      c.release();
    }
    clear();
  }

 private:
  std::vector<UnitCounter> parts_;
};

// A block of whole lines of a split file and its units, hashed and sorted
// into partitions.
struct UnitBlock {
  std::string text;
  std::vector<std::vector<HashedUnit>> parts;
};

// Reading, cutting and hashing run on all threads; each partition's counter
// is a serial filter of its own, so with n threads n counters fill at once
// (each on another block), every unit is counted in exactly one table, and
// nothing is merged at the end. Counts are exact sums: the result does not
// depend on the thread count.
Status count_units(const std::vector<std::string>& files, const std::vector<int>& columns, bool single_digits,
                   int threads, Counts& counts) {
  const size_t parts = counts.parts();
  for (const auto& path : files) {
    std::ifstream in(path, std::ios::binary);
    if (!in) return Error(ErrorKind::kIo, "cannot read split text", Location{path, 0, 0, {}});
    std::string carry;
    BatchPool<UnitBlock> pool(static_cast<size_t>(threads) * 4);
    auto cut = [&](UnitBlock* b) {
      TaskBody body;
      handoff_acquire(b);
      thread_local std::vector<uint32_t> ends;
      b->parts.resize(parts);
      for (auto& p : b->parts) p.clear();
      const char* base = b->text.data();
      for_each_line(b->text, [&](std::string_view line) {
        auto side = tsv_sides(line);
        for (int col : columns) {
          std::string_view t = side[col];
          ends.clear();
          unit_ends(t, single_digits, ends);
          uint32_t from = 0, at = static_cast<uint32_t>(t.data() - base);
          for (uint32_t e : ends) {
            uint64_t h = UnitCounter::hash(t.substr(from, e - from));
            b->parts[UnitCounter::partition_of(h, parts)].push_back({h, at + from, e - from});
            from = e;
          }
        }
      });
      handoff_release(b);
      return b;
    };
    tbb::filter<void, UnitBlock*> chain =
        line_block_source(in, carry, pool, 1 << 20, [](UnitBlock& b) -> std::string& { return b.text; }) &
        tbb::make_filter<UnitBlock*, UnitBlock*>(tbb::filter_mode::parallel, cut);
    for (size_t p = 0; p < parts; ++p)
      chain = chain &
              tbb::make_filter<UnitBlock*, UnitBlock*>(tbb::filter_mode::serial_in_order, [&counts, p](UnitBlock* b) {
                TaskBody body;
                SerialTurn turn(&counts.part(p));
                handoff_acquire(b);
                counts.part(p).add(b->text, b->parts[p]);
                handoff_release(b);
                return b;
              });
    tbb::task_arena arena(threads);
    arena.execute([&] {
      pool.run_pipeline(chain & tbb::make_filter<UnitBlock*, void>(tbb::filter_mode::parallel, [&](UnitBlock* b) {
                               TaskBody body;
                               handoff_acquire(b);
                               pool.release(b);
                             }));
    });
  }
  return {};
}

// Fills `words` from the counted word types (and `units`, if given),
// empties `counts` and learns the merges.
template <typename Store>
Result<std::vector<Merge>> learn_on(Store& words, Counts& counts, const Vocabulary& v, const TrainOptions& o,
                                    size_t fixed, LearnedUnits* units, size_t& n_types, double& merge_seconds) {
  size_t type_bytes = 0;
  counts.each([&](std::string_view w, uint64_t) { type_bytes += w.size(); });
  words.reserve(counts.size(), type_bytes);
  std::vector<uint32_t> symbols;
  bool fits = true;
  if (units) *units = LearnedUnits{};
  n_types = counts.size();
  counts.drain([&](std::string_view w, uint64_t n) {
    symbols.clear();
    v.initial_symbols(w, symbols);
    fits = fits && words.add(symbols, n);
  });
  if (!fits)
    return Error(ErrorKind::kData, "the " + o.side +
                                       " training text has more distinct word units than the learner can hold (" +
                                       std::to_string(n_types) + "); learn on a sample of the train split");

  // Token bytes as they grow, for the tie-breaking rule.
  std::vector<std::string> bytes;
  for (uint32_t id = 0; id < v.size(); ++id) bytes.push_back(v.token(id).bytes);
  LearnOptions lo;
  lo.max_merges = o.size - fixed;
  lo.min_count = o.min_count;
  lo.first_new_id = static_cast<uint32_t>(v.size());
  lo.first_mergeable = v.first_char();
  lo.threads = o.threads;
  lo.before = [&bytes](SymbolPair a, SymbolPair b) {
    const std::string &al = bytes[a.left], &ar = bytes[a.right], &bl = bytes[b.left], &br = bytes[b.right];
    // Compare al+ar with bl+br without building them.
    size_t na = al.size() + ar.size(), nb = bl.size() + br.size();
    for (size_t i = 0; i < std::min(na, nb); ++i) {
      unsigned char ca = static_cast<unsigned char>(i < al.size() ? al[i] : ar[i - al.size()]);
      unsigned char cb = static_cast<unsigned char>(i < bl.size() ? bl[i] : br[i - bl.size()]);
      if (ca != cb) return ca < cb;
    }
    if (na != nb) return na < nb;
    if (al.size() != bl.size()) return al.size() < bl.size();
    if (a.left != b.left) return a.left < b.left;
    return a.right < b.right;
  };
  lo.progress = [&](size_t done, uint64_t count) {
#ifdef __GLIBC__
    // Every 1000 merges, give the memory of freed holder lists back: glibc
    // keeps it for reuse, which the next lists' other sizes seldom fit, and
    // the learner's RSS grew by about 90 MiB over 31,667 merges on the 200 MB
    // benchmark corpus (docs/performance.md). The 31 trims there cost no
    // time that the same-minutes runs could tell from their noise.
    malloc_trim(0);
#endif
    if (o.progress)
      std::fprintf(stderr, "\r\033[Klearning %s vocabulary: %zu merges, current pair count %llu", o.side.c_str(), done,
                   static_cast<unsigned long long>(count));
  };
  lo.on_merge = [&bytes](const Merge& m) { bytes.push_back(bytes[m.left] + bytes[m.right]); };
  auto t2 = std::chrono::steady_clock::now();
  lo.stop = [] { return interrupt_requested().load(); };
  std::vector<Merge> merges = learn_merges(words, lo);
  if (interrupt_requested().load()) return interrupted_error();
  merge_seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t2).count();
  if (o.progress) std::fprintf(stderr, "\r\033[K");
  return merges;
}

// The learned ids of every word, packed: after the merges a word is a few
// ids, and its 12-byte header and the room of its first symbols are not
// needed (75 -> 22 MB for the 2.2 million word types of the 200 MB
// benchmark corpus, held while the shard step's encoder starts from them).
template <typename Store>
void keep_ids(const Store& words, LearnedUnits& units) {
  size_t total = 0;
  for (size_t w = 0; w < words.size(); ++w) total += words.word(w).size();
  units.ids.reserve(total);
  units.id_ends.reserve(words.size());
  for (size_t w = 0; w < words.size(); ++w) {
    auto s = words.word(w);
    units.ids.insert(units.ids.end(), s.begin(), s.end());
    units.id_ends.push_back(static_cast<uint32_t>(units.ids.size()));
  }
}

}  // namespace

Result<Vocabulary> train_vocabulary(const std::vector<std::string>& files, const std::vector<int>& columns,
                                    const TrainOptions& o, TrainReport* report, LearnedUnits* units) {
  auto t0 = std::chrono::steady_clock::now();
  Counts counts(static_cast<size_t>(std::max(1, o.threads)));
  try {
    SHEAF_TRY(count_units(files, columns, o.single_digits, o.threads, counts));
  } catch (const ErrorException& e) {
    return e.error;
  }
  auto t1 = std::chrono::steady_clock::now();
  // Word types are read straight from the counter, in its order: that order
  // depends on hashing and threads, but nothing learned depends on it (pair
  // counts are sums; the next merge is chosen by count and then by the tie
  // rule).
  // Character occurrences, weighted by word counts: a flat table for the BMP.
  std::vector<uint64_t> bmp(0x10000, 0);
  std::unordered_map<UChar32, uint64_t> astral;
  uint64_t total_chars = 0, total_units = 0;
  counts.each([&](std::string_view w, uint64_t n) {
    total_units += n;
    for_each_char(w, [&](UChar32 c, std::string_view) {
      if (c < 0) return;
      if (c < 0x10000)
        bmp[static_cast<size_t>(c)] += n;
      else
        astral[c] += n;
      total_chars += n;
    });
  });
  std::vector<std::pair<UChar32, uint64_t>> by_freq(astral.begin(), astral.end());
  for (UChar32 c = 0; c < 0x10000; ++c)
    if (bmp[static_cast<size_t>(c)]) by_freq.emplace_back(c, bmp[static_cast<size_t>(c)]);
  std::sort(by_freq.begin(), by_freq.end(), [](const auto& a, const auto& b) {
    return a.second != b.second ? a.second > b.second : a.first < b.first;
  });
  std::vector<std::string> alphabet;
  uint64_t covered = 0;
  for (const auto& [c, n] : by_freq) {
    if (total_chars > 0 && static_cast<double>(covered) >= o.alphabet_coverage * static_cast<double>(total_chars))
      break;
    char buf[4];
    int32_t k = 0;
    U8_APPEND_UNSAFE(buf, k, c);
    alphabet.emplace_back(buf, static_cast<size_t>(k));
    covered += n;
  }
  size_t fixed = 4 + 256 + alphabet.size();
  if (o.size < fixed)
    return Error(ErrorKind::kData, "vocabulary size " + std::to_string(o.size) + " is too small for the " +
                                       std::to_string(alphabet.size()) + " characters that cover " +
                                       std::to_string(o.alphabet_coverage) + " of the " + o.side +
                                       " training text (plus 4 special and 256 byte tokens); raise size to at least " +
                                       std::to_string(fixed) + " or lower alphabet_coverage");

  VocabularyInfo info{o.side, total_chars ? static_cast<double>(covered) / static_cast<double>(total_chars) : 1.0,
                      o.single_digits, o.unknown_as_bytes};
  Vocabulary v = Vocabulary::build(o.specials, o.special_ids, alphabet, info);

  // 16-bit symbols when every id fits: ids are below the vocabulary size.
  std::vector<Merge> merges;
  size_t n_types = 0;
  double merge_seconds = 0;
  if (o.size <= 65536) {
    NarrowWordList words;
    auto learned = learn_on(words, counts, v, o, fixed, units, n_types, merge_seconds);
    if (!learned) return learned.error();
    merges = std::move(*learned);
    if (units) keep_ids(words, *units);
  } else {
    WordList words;
    auto learned = learn_on(words, counts, v, o, fixed, units, n_types, merge_seconds);
    if (!learned) return learned.error();
    merges = std::move(*learned);
    if (units) keep_ids(words, *units);
  }
  for (const Merge& m : merges) v.add_merge(m.left, m.right);
  if (report) {
    report->word_types = n_types;
    report->word_units = total_units;
    report->characters = total_chars;
    report->distinct_characters = by_freq.size();
    report->merges = merges.size();
    report->stopped_early = merges.size() < o.size - fixed;
    report->count_seconds = std::chrono::duration<double>(t1 - t0).count();
    report->merge_seconds = merge_seconds;
  }
  return v;
}

}  // namespace sheaf
