// copy: drops untranslated pairs.
//
// "copy:identical" when both sides are the same text. A target with fewer
// than min_words words (stages/own_text.h's words: no placeholders, options,
// addresses or words with digits) is judged no further: names, numbers and
// cognates look like copies and are translations. Longer targets:
// "copy:words" when at least max_shared_words of the target's words occur in
// the source (a partial copy), "copy:overlap" when the Dice coefficient of
// the sides' multisets of character trigrams (lowercased, spaces kept)
// exceeds max_overlap. Pairs whose cheap trigram bound is at most 0.3 are
// neither. Thread-safe; no state.
#pragma once

#include <string_view>

#include "stages/stage.h"

namespace sheaf {

// 2 * |A ∩ B| / (|A| + |B|) over character trigram multisets; 0 for two
// texts shorter than three characters that differ.
double trigram_overlap(std::string_view a, std::string_view b);
// A fast upper bound of trigram_overlap (hashed ASCII trigrams), used to
// skip the exact computation for pairs that cannot pass max_overlap. It may
// stop as soon as the bound is known to be at most `stop_at`, returning a
// value that is still an upper bound and at most `stop_at` (so a caller
// that only compares the bound with `stop_at` decides as with the full one).
// `chars_a` and `chars_b`: the texts' code-point counts when already known
// (SIZE_MAX: counted here).
double trigram_overlap_bound(std::string_view a, std::string_view b, double stop_at = -1.0, size_t chars_a = SIZE_MAX,
                             size_t chars_b = SIZE_MAX);

const StageKind& copy_kind();
Result<std::unique_ptr<Stage>> make_copy(const StageContext& ctx);

}  // namespace sheaf
