// Text primitives shared by stages and the subword code, all built on ICU.
// Every function takes UTF-8; functions named *_valid expect valid UTF-8.
#pragma once

#include <unicode/utf8.h>

#include <cstddef>
#include <cstdint>
#include <cstring>
#include <functional>
#include <string>
#include <string_view>
#include <vector>

namespace sheaf {

// Walking text a code point at a time (the UTF-8 cursor, for_each_char)
// is core/utf8.h.

bool is_ascii(std::string_view s);

// Eight bytes at p for scans that take text a word at a time: the word (in
// memory order from its low byte), how many of its first bytes are ASCII
// (0 to 8: those before the first byte with its high bit set) and a mask of
// those bytes. Tests on the ASCII bytes that add or subtract within a byte
// stay exact under the mask: what a non-ASCII byte carries goes only to the
// bytes after it.
struct AsciiRun {
  uint64_t word;
  int ascii;
  uint64_t mask;
};
inline AsciiRun ascii_run_at(const uint8_t* p) {
  AsciiRun r;
  std::memcpy(&r.word, p, 8);
  uint64_t high = r.word & 0x8080808080808080ULL;
  r.ascii = high ? __builtin_ctzll(high) >> 3 : 8;
  r.mask = r.ascii == 8 ? ~uint64_t{0} : (uint64_t{1} << (8 * r.ascii)) - 1;
  return r;
}
// Bit-parallel tests on eight bytes at once. Each returns the high bit
// (0x80) of every byte of `v` for which the test holds and no other bit: no
// borrow or carry crosses from one byte into the next, so the answers are
// exact (tests/unit/text_reference_test.cc checks them against a byte loop
// on every byte value). The ascii_ tests are exact for bytes below 0x80;
// mask the others out (AsciiRun::mask).
inline constexpr uint64_t kEachByte = 0x0101010101010101ULL;
inline constexpr uint64_t kHighBits = 0x8080808080808080ULL;
inline uint64_t bytes_zero(uint64_t v) {
  constexpr uint64_t low7 = 0x7F7F7F7F7F7F7F7FULL;
  return ~(((v & low7) + low7) | v) & kHighBits;
}
inline uint64_t bytes_equal(uint64_t v, uint8_t c) { return bytes_zero(v ^ (kEachByte * c)); }
// Bytes >= t, for t in 1..0x80 (a byte b < 0x80 plus 0x80 - t stays below
// 0x100, and reaches 0x80 exactly when b >= t).
inline uint64_t ascii_bytes_at_least(uint64_t v, uint8_t t) { return (v + kEachByte * (0x80u - t)) & kHighBits; }
inline uint64_t ascii_bytes_below(uint64_t v, uint8_t t) { return ~ascii_bytes_at_least(v, t) & kHighBits; }

// True when `s` is well-formed UTF-8 (no overlongs, surrogates, or values
// above U+10FFFF).
bool is_valid_utf8(std::string_view s);
// Appends `s` to `out` with every ill-formed sequence replaced by U+FFFD,
// one replacement per maximal ill-formed subpart (Unicode 15.0, section 3.9,
// "U+FFFD Substitution of Maximal Subparts", as ICU's U8_NEXT implements it).
// Returns the number of replacements.
size_t repair_utf8(std::string_view s, std::string& out);

size_t count_code_points(std::string_view s);

// Word segmentation by the Unicode word-boundary rules (UAX #29, with ICU's
// dictionaries for scripts written without spaces). Thread-safe: each thread
// uses its own break iterator.
//
// cut_words calls fn(begin, end, is_word) for every segment between two
// boundaries; is_word is false for spaces and punctuation. A segment is a
// "word" when ICU's rule status is a number, letter, kana or ideograph.
void cut_words(std::string_view s, const std::function<void(size_t, size_t, bool)>& fn);
// The same segments as cut_words, as the end offset of each (segments tile
// the text, so segment k is [ends[k-1], ends[k]) with ends[-1] = 0), appended
// to `ends`. No call per segment: the cheap form for hot loops.
void word_segment_ends(std::string_view s, std::vector<uint32_t>& ends);
// With `chars`, also the number of code points (count_code_points), from
// the same scan where it can.
size_t count_words(std::string_view s, size_t* chars = nullptr);
// ICU alone, without the fast path for simple text (for tests).
void cut_words_reference(std::string_view s, const std::function<void(size_t, size_t, bool)>& fn);
// Length in code points of the longest word segment.
size_t longest_word(std::string_view s);

// Collapses runs of ASCII spaces to one and trims both ends, in place.
void collapse_spaces(std::string& s);

}  // namespace sheaf
