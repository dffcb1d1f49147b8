// language: drops pairs in which CLD2 reliably identifies a side as a language
// other than the side's own.
//
// A side with fewer than min_letters letters is not judged (identification of
// short strings is unreliable). Only verdicts CLD2 marks reliable count, and
// "unknown" never drops. With accept_related (default) close relatives that
// CLD2 confuses on short text are accepted too (Spanish: Galician, Catalan,
// Portuguese; the table is in docs/pipeline.md). Languages compare by primary subtag, so "zh-Hant"
// counts as "zh". Reason code: language:SIDE=CODE with the detected code.
// CLD2's detection functions are thread-safe (compact_lang_det.h), so map()
// runs in parallel. This is the slowest filter: put cheaper ones first.
#pragma once

#include <string>
#include <string_view>
#include <vector>

#include "stages/stage.h"

namespace sheaf {

struct LanguageGuess {
  std::string code;  // ISO 639 code as CLD2 names it, "un" if unknown
  bool reliable = false;
};
LanguageGuess identify_language(std::string_view text);
// Languages CLD2 confuses with `lang` on short text (accept_related).
std::vector<std::string> related_languages(std::string_view lang);
// True when CLD2 knows the language code.
bool cld2_knows(std::string_view code);

const StageKind& language_kind();
Result<std::unique_ptr<Stage>> make_language(const StageContext& ctx);

}  // namespace sheaf
