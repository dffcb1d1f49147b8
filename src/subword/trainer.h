// Trainer: learns a Vocabulary from split text files.
//
// Counts word units (units.h) over one or both columns of TSV split files in
// parallel (the hash space is cut into partitions, each counted by one serial
// filter, so every unit lands in exactly one table and nothing is merged; the
// counts are exact sums and do not depend on the thread count), picks the base alphabet (the most frequent
// characters covering `alphabet_coverage` of all character occurrences; ties
// by code point), then learns merges (merge_learner.h) until the vocabulary
// has `size` tokens or no pair occurs `min_count` times.
// Ties between pairs of equal count: the pair whose merged bytes sort first
// (unsigned byte order), then the one with the shorter left part, then the
// smaller left id, then the smaller right id: a total order, so nothing
// learned depends on the order of word types.
#pragma once

#include <array>
#include <span>
#include <string>
#include <vector>

#include "core/error.h"
#include "subword/merge_learner.h"
#include "subword/vocabulary.h"

namespace sheaf {

struct TrainOptions {
  size_t size = 8000;
  uint64_t min_count = 2;
  double alphabet_coverage = 0.9999;
  bool single_digits = false;
  bool unknown_as_bytes = true;
  std::array<std::string, 4> specials;
  std::array<uint32_t, 4> special_ids{0, 1, 2, 3};
  std::string side;  // recorded in the file
  int threads = 1;
  bool progress = false;
};

struct TrainReport {
  uint64_t word_types = 0;
  uint64_t word_units = 0;
  uint64_t characters = 0;  // character occurrences counted
  uint64_t distinct_characters = 0;
  size_t merges = 0;
  bool stopped_early = false;  // ran out of pairs with min_count occurrences
  // Wall time of counting and of the merge phase (for benchmarks; never
  // written into an output, which must not depend on timing).
  double count_seconds = 0, merge_seconds = 0;
};

// The distinct word units of the training text with their ids under every
// learned merge: exactly what the learner ends with, so an encoder can start
// from them (Encoder::remember) instead of encoding the training text again.
struct LearnedUnits {
  std::vector<uint32_t> ids;      // the units' ids back to back
  std::vector<uint32_t> id_ends;  // unit k's ids are ids[id_ends[k-1], id_ends[k]), id_ends[-1] = 0
  size_t size() const { return id_ends.size(); }
  std::span<const uint32_t> ids_of(size_t k) const {
    size_t b = k == 0 ? 0 : id_ends[k - 1];
    return std::span<const uint32_t>(ids).subspan(b, id_ends[k] - b);
  }
  // Unit k's text, in `out`: the bytes of its tokens under the vocabulary it
  // was learned for (merges keep every byte). False when it holds the
  // unknown token, whose bytes are lost. The units' own bytes are not kept:
  // 42 MB on the 200 MB benchmark corpus, at the learner's peak.
  bool text_of(size_t k, const Vocabulary& v, std::string& out) const {
    out.clear();
    for (uint32_t id : ids_of(k)) {
      if (id == v.special(kUnk)) return false;
      out += v.token(id).bytes;
    }
    return true;
  }
};

// `columns`: {0}, {1} or {0, 1} of each TSV file. `units`, if given,
// receives the learned units.
Result<Vocabulary> train_vocabulary(const std::vector<std::string>& files, const std::vector<int>& columns,
                                    const TrainOptions& o, TrainReport* report, LearnedUnits* units = nullptr);

}  // namespace sheaf
