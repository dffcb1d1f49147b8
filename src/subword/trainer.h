// Trainer: learns a Vocabulary from split text files.
//
// Counts word units (units.h) over one or both columns of TSV split files in
// parallel (per-thread counts merged by exact integer sums, so the result does
// not depend on the thread count), picks the base alphabet (the most frequent
// characters covering `alphabet_coverage` of all character occurrences; ties
// by code point), then learns merges (merge_learner.h) until the vocabulary
// has `size` tokens or no pair occurs `min_count` times.
// Ties between pairs of equal count: the pair whose merged bytes sort first
// (unsigned byte order), then the one with the shorter left part, then the
// smaller left id.
#pragma once

#include <array>
#include <string>
#include <vector>

#include "core/error.h"
#include "subword/vocabulary.h"

namespace sheaf {

struct TrainOptions {
  size_t size = 8000;
  uint64_t min_count = 2;
  double alphabet_coverage = 0.9999;
  bool split_digits = false;
  bool byte_fallback = true;
  std::array<std::string, 4> specials;
  std::array<uint32_t, 4> special_ids{0, 1, 2, 3};
  std::string side;  // recorded in the file
  int threads = 1;
  bool progress = false;
};

struct TrainReport {
  uint64_t word_types = 0;
  uint64_t word_units = 0;
  uint64_t characters = 0;       // character occurrences counted
  uint64_t distinct_characters = 0;
  size_t merges = 0;
  bool stopped_early = false;    // ran out of pairs with min_count occurrences
  // Wall time of counting and of the merge phase (for benchmarks; never
  // written into an output, which must not depend on timing).
  double count_seconds = 0, merge_seconds = 0;
};

// `columns`: {0}, {1} or {0, 1} of each TSV file.
Result<Vocabulary> train_vocabulary(const std::vector<std::string>& files, const std::vector<int>& columns,
                                    const TrainOptions& o, TrainReport* report);

}  // namespace sheaf
