#include "subword/units.h"

#include <unicode/uchar.h>
#include <unicode/utf8.h>

#include "core/text.h"
#include "core/utf8.h"

namespace sheaf {

namespace {

bool only_spaces(std::string_view s) { return s.find_first_not_of(' ') == std::string_view::npos; }

// Cuts the unit [from, to) of `text` at every decimal digit.
void digit_ends(std::string_view text, size_t from, size_t to, std::vector<uint32_t>& ends) {
  Utf8Cursor u(text, from, to);
  size_t start = from;
  while (!u.done()) {
    size_t at = u.pos();
    UChar32 c = u.next();
    if (c >= 0 && (c < 0x80 ? (c >= '0' && c <= '9') : u_isdigit(c))) {
      // Everything before the digit (spaces, letters) is one unit, unless it
      // is only the spaces that lead this digit.
      if (!only_spaces(text.substr(start, at - start))) {
        ends.push_back(static_cast<uint32_t>(at));
        start = at;
      }
      ends.push_back(static_cast<uint32_t>(u.pos()));
      start = u.pos();
    }
  }
  if (start < to) ends.push_back(static_cast<uint32_t>(to));
}

thread_local std::vector<uint32_t> t_segments;

}  // namespace

void unit_ends(std::string_view text, bool single_digits, std::vector<uint32_t>& ends) {
  std::vector<uint32_t>& seg = t_segments;
  seg.clear();
  word_segment_ends(text, seg);
  size_t b = 0, pending = 0;  // pending: start of spaces waiting for the next segment
  bool have_pending = false;
  for (uint32_t e : seg) {
    if (text[b] == ' ' && only_spaces(text.substr(b, e - b))) {
      if (!have_pending) {
        pending = b;
        have_pending = true;
      }
    } else {
      size_t from = have_pending ? pending : b;
      have_pending = false;
      if (single_digits) digit_ends(text, from, e, ends);
      else ends.push_back(e);
    }
    b = e;
  }
  if (have_pending) ends.push_back(static_cast<uint32_t>(text.size()));
}

void cut_units(std::string_view text, bool single_digits, const std::function<void(std::string_view)>& unit) {
  std::vector<uint32_t> ends;
  unit_ends(text, single_digits, ends);
  uint32_t b = 0;
  for (uint32_t e : ends) {
    unit(text.substr(b, e - b));
    b = e;
  }
}

}  // namespace sheaf
