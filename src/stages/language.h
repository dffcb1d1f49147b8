// language: drops pairs in which CLD2 confidently finds a side written in a
// language other than the side's own.
//
// Each side is judged by its own text (stages/own_text.h: spans shared with
// the other side, placeholders, markup and addresses taken out). A side with
// fewer than min_letters letters of its own is not judged. Nor is a side
// whose own letters are all in a script that, among the languages CLD2
// knows, only the side's language is written in (Thai, Greek, Hangul, kana,
// Georgian, ...): the script already settles it, and CLD2 is not asked.
// Otherwise CLD2's full answer is read (ExtDetectLanguageSummary, no hint):
// its top three languages with the share of the text each holds, and its
// reliability flag. The pair is dropped only
// when the top language is not an accepted one, CLD2 marks the answer
// reliable, that language holds at least min_share percent of the text, and
// no accepted language holds more than 100 - min_share percent; the letters
// then confirm or overturn the verdict (CLDR exemplar characters: letters
// only one of the two languages writes), and when they say nothing CLD2 is
// asked again with the side's language as hint and must hold to it. Text
// CLD2 cannot place is asked again with the hint, and a confident answer
// for another language despite it is a verdict. Accepted:
// the side's language, the languages listed in SIDE_accept, and with
// accept_related (off by default) close relatives (table in
// docs/pipeline.md). Codes compare as CLD2 reads them, by primary subtag
// ("he" is CLD2's "iw", "zh-TW" is "zh-Hant", which is "zh").
// Reason code: language:SIDE=CODE with the detected code.
// CLD2 reads at most 160 bytes of the own text; a verdict is remembered per
// thread (4,096 recent texts per side), so text that comes again is not
// asked about twice.
// Counters (the same at any thread count): judged:SIDE (sides that needed a
// verdict), settled-by-script:SIDE, too-few-letters:SIDE, rechecked:SIDE
// (verdicts that needed a second question, with the hint).
// CLD2's detection functions are thread-safe (compact_lang_det.h), so map()
// runs in parallel. This is the slowest filter: put cheaper ones first.
#pragma once

#include <string>
#include <string_view>
#include <vector>

#include "stages/stage.h"

namespace sheaf {

// CLD2's answer for a text: up to three languages (CLD2 codes) with the
// percent of the text each holds, and the reliability flag.
struct LanguageGuess {
  std::string code[3];  // "un" when absent
  int percent[3] = {0, 0, 0};
  bool reliable = false;
};
// `hint`: a language code CLD2 should favour (empty: none).
LanguageGuess identify_language(std::string_view text, std::string_view hint = {});
// Languages CLD2 confuses with `lang` on short text (accept_related).
std::vector<std::string> related_languages(std::string_view lang);
// Languages of the same family as `lang` (shared vocabulary): the
// candidates the word test tries when CLD2 cannot place a text.
std::vector<std::string> family_languages(std::string_view lang);
// True when CLD2 knows the language code.
bool cld2_knows(std::string_view code);
// The code as the stage compares it: CLD2's code for the language, primary
// subtag only ("he" -> "iw", "zh-TW" -> "zh", "nb" -> "no").
std::string language_key(std::string_view code);

const StageKind& language_kind();
Result<std::unique_ptr<Stage>> make_language(const StageContext& ctx);

}  // namespace sheaf
