// script: drops pairs whose own letters are mostly not in the side's scripts.
//
// Per side, among the letters (general category L*) whose Unicode script
// (ICU uscript_getScript) is neither Common nor Inherited, the fraction in the
// expected scripts must be at least min_ratio (default 0.5). The letters
// counted are the side's own (stages/own_text.h: spans shared with the other
// side, placeholders, markup, addresses, identifiers and acronyms taken
// out); a side with fewer than min_letters (default 4) own letters passes,
// and so does a side whose whole text passes. Expected scripts come from the
// side's language (table in docs/pipeline.md) unless SIDE_scripts lists
// ISO 15924 codes. Reason code: script:SIDE. Thread-safe; no state.
#pragma once

#include <string>
#include <string_view>
#include <vector>

#include <unicode/uscript.h>

#include "stages/stage.h"

namespace sheaf {

// ISO 15924 codes of the scripts a language is written in; empty if unknown.
std::vector<std::string> scripts_for_language(std::string_view lang);

// Letters counted and letters in `expected`, as the stage sees them.
struct ScriptCount {
  size_t letters = 0;
  size_t expected = 0;
};
ScriptCount count_scripts(std::string_view text, const std::vector<UScriptCode>& expected);

// The same count with a table of the Basic Multilingual Plane built once for
// a set of scripts (what the stage uses; tested against count_scripts).
class ScriptTable {
 public:
  explicit ScriptTable(std::vector<UScriptCode> expected);
  ScriptCount count(std::string_view text) const;

 private:
  std::vector<UScriptCode> expected_;
  std::vector<uint8_t> bmp_;  // 0: not counted, 1: counted, expected, 2: counted, other
  bool latin_ = false;
};

const StageKind& script_kind();
Result<std::unique_ptr<Stage>> make_script(const StageContext& ctx);

}  // namespace sheaf
