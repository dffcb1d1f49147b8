#include "subword/units.h"

#include <unicode/uchar.h>
#include <unicode/utf8.h>

#include "core/text.h"

namespace sheaf {

namespace {

// Emits `seg` (which may start with spaces) cut at every decimal digit.
void emit_digits(std::string_view seg, const std::function<void(std::string_view)>& unit) {
  const uint8_t* p = reinterpret_cast<const uint8_t*>(seg.data());
  int32_t n = static_cast<int32_t>(seg.size()), i = 0;
  size_t start = 0;
  while (i < n) {
    int32_t at = i;
    UChar32 c;
    U8_NEXT(p, i, n, c);
    if (c >= 0 && u_isdigit(c)) {
      // Everything before the digit (spaces, letters) is one unit, unless it
      // is only the spaces that lead this digit.
      bool only_spaces = seg.substr(start, static_cast<size_t>(at) - start).find_first_not_of(' ') == std::string_view::npos;
      if (!only_spaces) {
        unit(seg.substr(start, static_cast<size_t>(at) - start));
        start = static_cast<size_t>(at);
      }
      unit(seg.substr(start, static_cast<size_t>(i) - start));
      start = static_cast<size_t>(i);
    }
  }
  if (start < seg.size()) unit(seg.substr(start));
}

}  // namespace

void cut_units(std::string_view text, bool split_digits, const std::function<void(std::string_view)>& unit) {
  size_t pending = 0;  // start of spaces waiting for the next segment
  bool have_pending = false;
  cut_words(text, [&](size_t b, size_t e, bool) {
    std::string_view seg = text.substr(b, e - b);
    if (seg.find_first_not_of(' ') == std::string_view::npos) {
      if (!have_pending) {
        pending = b;
        have_pending = true;
      }
      return;
    }
    size_t from = have_pending ? pending : b;
    have_pending = false;
    std::string_view u = text.substr(from, e - from);
    if (split_digits) emit_digits(u, unit);
    else unit(u);
  });
  if (have_pending) unit(text.substr(pending));
}

}  // namespace sheaf
