// One UTF-8 cursor for every loop that walks text a code point at a time.
//
// The step (Utf8Cursor::next) is ICU's U8_NEXT: a well-formed sequence gives
// its code point; anything else gives a negative value (U_SENTINEL) and the
// cursor moves past one maximal subpart of an ill-formed subsequence
// (Unicode Standard 15.0, section 3.9, "U+FFFD Substitution of Maximal
// Subparts"; well-formed sequences as in Table 3-7). Every loop that this
// cursor replaced called U8_NEXT, so their answers on ill-formed input are
// unchanged. tests/unit/utf8_test.cc holds the cursor to U8_NEXT on every
// scalar value and to the standard's tables on ill-formed input.
//
// Loops that treat ASCII apart test byte() < 0x80 and take() the byte
// before they call next(): the test on the decoded value that would replace
// it costs an instruction or two per character in the hottest loops
// (measured with callgrind, docs/performance.md).
//
// The eight-byte ASCII step (ascii_run) hands out core/text.h's AsciiRun:
// the loops test its bytes with core/text.h's exact bit-parallel helpers
// (bytes_zero, bytes_equal, ascii_bytes_at_least, ascii_bytes_below).
//
// Two rules that do not validate are here too, each written once: "a byte
// that is not a continuation byte starts a character" (counting and cutting
// at character starts, as count_code_points does) and the sequence length a
// lead byte announces (utf8_lead_length). On ill-formed input they answer
// differently from the step, which is why the loops that use them keep them
// (they run on text that is already well-formed, or only need a count).
#pragma once

#include "core/text.h"

#include <unicode/utf8.h>

#include <cstddef>
#include <cstdint>
#include <string_view>

namespace sheaf {

class Utf8Cursor {
 public:
  // Walks s[at, end) (end clipped to s.size()).
  explicit Utf8Cursor(std::string_view s, size_t at = 0, size_t end = std::string_view::npos)
      : p_(reinterpret_cast<const uint8_t*>(s.data())),
        i_(static_cast<int32_t>(at)),
        n_(static_cast<int32_t>(end < s.size() ? end : s.size())) {}

  bool done() const { return i_ >= n_; }
  size_t pos() const { return static_cast<size_t>(i_); }
  size_t end() const { return static_cast<size_t>(n_); }
  // The byte at pos() (not done()).
  uint8_t byte() const { return p_[i_]; }
  const uint8_t* data() const { return p_; }

  // The code point at pos(), moving past it: its value, or a negative value
  // for an ill-formed sequence, after which the cursor has moved past one
  // maximal subpart (ICU's U8_NEXT; see the top of this file). Not done().
  UChar32 next() {
    UChar32 c;
    U8_NEXT(p_, i_, n_, c);
    return c;
  }
  // The byte at pos(), moving past it: for a caller that has seen it is
  // ASCII (byte() < 0x80) and takes it without the decoder's checks.
  uint8_t take() { return p_[i_++]; }
  // Moves past k bytes the caller has already judged (an ASCII byte, or the
  // ASCII bytes of an ascii_run).
  void skip(size_t k) { i_ += static_cast<int32_t>(k); }
  // Moves to byte offset `at` (at <= end()).
  void seek(size_t at) { i_ = static_cast<int32_t>(at); }

  // When at least eight bytes are left: the eight bytes at pos() as
  // core/text.h's AsciiRun (word, how many lead bytes are ASCII, their
  // mask); the cursor does not move (skip(w.ascii) after using them).
  bool ascii_run(AsciiRun& w) const {
    if (n_ - i_ < 8) return false;
    w = ascii_run_at(p_ + i_);
    return true;
  }

 private:
  const uint8_t* p_;
  int32_t i_, n_;
};

// Calls fn(c, bytes) for each code point of `s` in order: c is the code
// point, or negative for an ill-formed sequence (one call per maximal
// ill-formed subpart, as ICU's U8_NEXT delimits them); bytes are its UTF-8.
template <typename Fn>
void for_each_char(std::string_view s, Fn&& fn) {
  Utf8Cursor u(s);
  while (!u.done()) {
    size_t at = u.pos();
    UChar32 c = u.next();
    fn(c, s.substr(at, u.pos() - at));
  }
}

// The code point when `s` is exactly one well-formed character; negative
// otherwise (empty, ill-formed, or more than one character).
inline UChar32 utf8_single(std::string_view s) {
  if (s.empty()) return -1;
  Utf8Cursor u(s);
  UChar32 c = u.next();
  return u.done() ? c : -1;
}

// A continuation byte (10xxxxxx): every other byte starts a character when
// the text is well-formed. No validation.
inline bool utf8_continuation(uint8_t b) { return (b & 0xC0) == 0x80; }
// The length a byte announces when it starts a sequence: 4 for F0..FF, 3
// for E0..EF, 2 for C0..DF, 1 otherwise (ASCII and stray continuation
// bytes). No validation: on well-formed text it is the sequence's length.
inline size_t utf8_lead_length(uint8_t b) { return b >= 0xF0 ? 4 : b >= 0xE0 ? 3 : b >= 0xC0 ? 2 : 1; }

}  // namespace sheaf
