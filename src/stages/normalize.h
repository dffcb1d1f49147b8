// normalize: makes each side's text canonical Unicode, one space between words.
//
// Per side, in this order:
//  1. invalid UTF-8: the pair is dropped (reason invalid-utf8:SIDE), or, with
//     invalid_utf8 = "replace", every ill-formed sequence becomes U+FFFD and
//     the repairs are counted (counter repaired_utf8);
//  2. control and format characters that carry no text are removed (C0/C1
//     controls other than whitespace, zero-width space, bidirectional
//     embeddings/overrides/isolates, word joiner, BOM, soft hyphen...); kept:
//     ZWJ and ZWNJ (needed by several scripts and emoji sequences), the
//     Arabic/Syriac number signs, and the tag characters of emoji flags;
//  3. every White_Space character (TAB, LF, CR, NEL, NBSP, U+2028, U+2029,
//     U+3000, ...) becomes one ASCII space; runs collapse; ends are trimmed;
//  4. optional case folding (full Unicode case folding);
//  5. normalization form NFC (default), NFKC or none, per side;
//  6. optional punctuation unification (curly quotes to straight, dash
//     variants to '-').
// Steps 2-3 run again when 5 changed the text, so the result is both
// normalized and clean. After this stage no side holds a TAB, CR or LF.
// Text that is already clean ASCII is recognized in one scan and not copied.
// Counters: repaired_utf8, changed:source, changed:target (pairs whose side
// the stage changed). Thread-safe: map() keeps no state but atomic counters.
#pragma once

#include <atomic>
#include <string>
#include <string_view>

#include "config/schema.h"
#include "stages/stage.h"

namespace sheaf {

enum class NormalForm { kNone, kNfc, kNfkc };

struct NormalizeOptions {
  NormalForm form[2] = {NormalForm::kNfc, NormalForm::kNfc};
  bool repair_utf8 = false;
  bool strip_controls = true;
  bool casefold = false;
  bool punctuation[2] = {false, false};
};

// The text transformation of the stage, usable on its own (and tested so).
class TextNormalizer {
 public:
  explicit TextNormalizer(const NormalizeOptions& o);
  enum class Outcome { kUnchanged, kRewritten, kInvalidUtf8 };
  // Normalizes `in` for `side`. kUnchanged: `in` is already canonical and
  // `out` is untouched; kRewritten: the result is in `out`.
  Outcome apply(std::string_view in, int side, std::string& out, size_t* repairs) const;

 private:
  NormalizeOptions o_;
};

const StageKind& normalize_kind();
Result<std::unique_ptr<Stage>> make_normalize(const StageContext& ctx);
NormalizeOptions normalize_options(const Params& p);

}  // namespace sheaf
