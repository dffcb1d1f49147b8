// length: drops pairs whose sides are empty, too short, too long, out of
// proportion, or hold an implausibly long word.
//
// Lengths are measured in the chosen unit: Unicode code points ("chars"),
// UTF-8 bytes ("bytes"), or words by the Unicode word-boundary rules
// (UAX #29, "words"; works for scripts written without spaces).
// Reason codes, in the order they are checked:
//   empty:source | empty:target | empty:both   a side has no text
//   too-short:SIDE, too-long:SIDE              outside [SIDE_min, SIDE_max]
//   ratio                                      (long + slack) / (short + slack) > max_ratio
//   long-word:SIDE                             a word over max_word_chars code points
//                                              (an ASCII run without spaces counts whole)
// Thread-safe; no state.
#pragma once

#include "stages/stage.h"

namespace sheaf {

enum class LengthUnit { kChars, kBytes, kWords };

struct LengthOptions {
  LengthUnit unit = LengthUnit::kWords;
  int64_t min[2] = {1, 1};
  int64_t max[2] = {200, 200};
  double max_ratio = 3.0;   // 0 = off
  double ratio_slack = 4.0;
  int64_t max_word_chars = 60;  // 0 = off
};

// The ratio the stage compares with max_ratio.
double length_ratio(size_t a, size_t b, double slack);

const StageKind& length_kind();
Result<std::unique_ptr<Stage>> make_length(const StageContext& ctx);

}  // namespace sheaf
