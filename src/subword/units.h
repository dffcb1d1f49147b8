// Word units: how text is cut before byte-pair encoding, losslessly.
//
// Boundaries are those of the Unicode word rules (UAX #29, with ICU's
// dictionaries for scripts written without spaces), so merges never cross a
// word boundary and Japanese, Chinese or Thai are cut into words, not whole
// sentences. Spaces are not units of their own: a run of spaces belongs to
// the unit that follows it, so " garden" (with its space) is one unit and the
// concatenation of the units is the text, byte for byte. Spaces at the very
// end of a text form a last unit. With single_digits, every decimal digit is
// a unit of its own (the space before a number stays with its first digit).
// Thread-safe.
#pragma once

#include <cstdint>
#include <functional>
#include <string_view>
#include <vector>

namespace sheaf {

// Appends the end offset of every unit of `text` to `ends`: units tile the
// text, so unit k is [ends[k-1], ends[k]) (ends[-1] = 0). The form for hot
// loops: no call per unit.
void unit_ends(std::string_view text, bool single_digits, std::vector<uint32_t>& ends);

// Calls unit(u) for every unit, in order.
void cut_units(std::string_view text, bool single_digits, const std::function<void(std::string_view)>& unit);

}  // namespace sheaf
