#include "core/text.h"

#include "core/error.h"
#include "core/utf8.h"

#include <unicode/brkiter.h>
#include <unicode/uchar.h>
#include <unicode/utext.h>
#include <unicode/utf8.h>

#include <cstring>
#include <memory>
#include <vector>

namespace sheaf {

bool is_ascii(std::string_view s) {
  const unsigned char* p = reinterpret_cast<const unsigned char*>(s.data());
  size_t n = s.size(), i = 0;
  uint64_t acc = 0;
  for (; i + 8 <= n; i += 8) {
    uint64_t w;
    std::memcpy(&w, p + i, 8);
    acc |= w;
  }
  for (; i < n; ++i) acc |= p[i];
  return (acc & 0x8080808080808080ULL) == 0;
}

bool is_valid_utf8(std::string_view s) {
  Utf8Cursor u(s);
  while (!u.done())
    if (u.next() < 0) return false;
  return true;
}

size_t repair_utf8(std::string_view s, std::string& out) {
  Utf8Cursor u(s);
  size_t repairs = 0;
  while (!u.done()) {
    size_t start = u.pos();
    if (u.next() < 0) {
      out += "\xEF\xBF\xBD";
      ++repairs;
    } else {
      out.append(s.data() + start, u.pos() - start);
    }
  }
  return repairs;
}

size_t count_code_points(std::string_view s) {
  size_t n = 0;
  for (unsigned char c : s) n += !utf8_continuation(c);
  return n;
}

namespace {

icu::BreakIterator& word_iterator() {
  static const std::unique_ptr<icu::BreakIterator> prototype = [] {
    UErrorCode st = U_ZERO_ERROR;
    std::unique_ptr<icu::BreakIterator> bi(icu::BreakIterator::createWordInstance(icu::Locale::getRoot(), st));
    // Thrown as an error value: the runner turns an ErrorException raised
    // inside a oneTBB filter back into a Status (a bare std::runtime_error
    // would escape it and end the process).
    if (U_FAILURE(st))
      throw ErrorException{Error(ErrorKind::kInternal, std::string("ICU could not build its word break iterator (") +
                                                           u_errorName(st) + "); check that ICU's data is installed")};
    return bi;
  }();
  thread_local std::unique_ptr<icu::BreakIterator> mine(prototype->clone());
  return *mine;
}

// A fast path for the word rules. Text made only of characters whose word
// boundaries follow from a few classes (letters of alphabetic scripts,
// digits, spaces, the mid-word punctuation of UAX #29, other punctuation and
// symbols) is segmented here, by rules WB3d, WB5-WB13b and WB999 as ICU's
// root rules apply them; any other character (marks, ideographs, kana,
// scripts cut by dictionary, Hebrew, regional indicators, controls, ...)
// sends the whole text to ICU. tests/unit/text_reference_test.cc compares the
// two on generated text and on WordBreakTest.txt.
enum Wc : uint8_t { kOther = 0, kLetter, kDigit, kSpace, kMidLetter, kMidNumLet, kMidNum, kExtendNumLet, kPunct };

const uint8_t* word_classes() {
  static const std::vector<uint8_t> table = [] {
    std::vector<uint8_t> t(0x10000, kOther);
    for (UChar32 c = 0x20; c < 0x10000; ++c) {
      if (c >= 0xD800 && c <= 0xDFFF) continue;
      int32_t wb = u_getIntPropertyValue(c, UCHAR_WORD_BREAK);
      uint32_t gc = U_GET_GC_MASK(c);
      uint8_t k = kOther;
      if (c == ' ')
        k = kSpace;
      else if (wb == U_WB_ALETTER || c == '@')
        k = kLetter;  // ICU's root rules count '@' as a letter
      else if (wb == U_WB_NUMERIC)
        k = kDigit;
      else if (wb == U_WB_MIDLETTER)
        k = (c == 0x3A || c == 0xFE55 || c == 0xFF1A || c == 0xFE13) ? kPunct : kMidLetter;
      else if (wb == U_WB_MIDNUMLET || wb == U_WB_SINGLE_QUOTE)
        k = kMidNumLet;
      else if (wb == U_WB_MIDNUM)
        k = kMidNum;
      else if (wb == U_WB_EXTENDNUMLET)
        k = kExtendNumLet;
      // Double_Quote joins only between Hebrew letters (WB7b, WB7c), which
      // send text to ICU; anywhere else it is a segment of its own (WB999).
      else if (wb == U_WB_DOUBLE_QUOTE)
        k = kPunct;
      else if (wb == U_WB_OTHER && (gc & (U_GC_P_MASK | U_GC_S_MASK)) &&
               !u_hasBinaryProperty(c, UCHAR_EXTENDED_PICTOGRAPHIC) && !u_hasBinaryProperty(c, UCHAR_IDEOGRAPHIC))
        k = kPunct;
      t[static_cast<size_t>(c)] = k;
    }
    return t;
  }();
  return table.data();
}

// The class of the code point at the cursor, moving past it; kOther for
// anything the fast path leaves to ICU (including ill-formed UTF-8 and
// supplementary planes).
inline uint8_t class_at(const uint8_t* table, Utf8Cursor& u) {
  if (u.byte() < 0x80) return table[u.take()];
  UChar32 c = u.next();
  if (c < 0 || c > 0xFFFF) return kOther;
  return table[c];
}

// The word rules of the fast path as one finite automaton over word
// classes (rules WB3d, WB5-WB13b, WB999 as ICU's root rules apply them to
// these classes). A word is a run of letters, digits and '_' (not a lone
// '_'), joined across one mid-word character between two letters (WB6,
// WB7) or two digits (WB11, WB12); a run of spaces is one segment (WB3d);
// every other character is a segment of its own. Each step says whether a
// boundary falls before the character, and whether a word is counted at it
// (at its first character, or at its second when it starts with '_'). After
// a mid-word character the automaton waits for the next one: if that does
// not go on with the word, the mid-word character was a segment of its own
// (a boundary before it too), and the character is read as if outside a
// word. Segmenting, counting and the word status of cut_words are modes of
// these same tables; tests/unit/text_reference_test.cc holds them to ICU.
enum WordState : uint8_t {
  kOut,
  kInSpace,
  kInLetter,
  kInDigit,
  kInUnderscore,
  kLoneUnderscore,
  kAfterLetterMid,
  kAfterDigitMid,
  kStates
};
constexpr uint8_t kStateBits = 0x0F;
constexpr uint8_t kBreak = 0x10;     // a boundary before this character
constexpr uint8_t kBreakMid = 0x20;  // and one before the waiting mid-word character
constexpr uint8_t kCount = 0x80;     // a word is counted at this character
struct WordAutomaton {
  uint8_t next[kStates][16];  // the next state and the flags above
  // Two characters at a time, for counting (classes c1 * 16 + c2): low 6
  // bits: the state after both; high 2 bits: the words counted on the way.
  uint8_t next2[kStates][256];
};

inline bool wordish(uint8_t c) { return c == kLetter || c == kDigit || c == kExtendNumLet; }

const WordAutomaton& word_automaton() {
  static const WordAutomaton a = [] {
    WordAutomaton t{};
    for (uint8_t c = 0; c < 16; ++c) {
      // Outside a word (and the row a waiting state falls back to).
      uint8_t out = c == kLetter         ? uint8_t{kInLetter | kCount}
                    : c == kDigit        ? uint8_t{kInDigit | kCount}
                    : c == kExtendNumLet ? uint8_t{kLoneUnderscore}
                    : c == kSpace        ? uint8_t{kInSpace}
                                         : uint8_t{kOut};
      t.next[kOut][c] = out | kBreak;
      t.next[kInSpace][c] = c == kSpace ? uint8_t{kInSpace} : uint8_t(out | kBreak);
      for (uint8_t st : {kInLetter, kInDigit, kInUnderscore, kLoneUnderscore}) {
        uint8_t r;
        if (c == kLetter)
          r = kInLetter;
        else if (c == kDigit)
          r = kInDigit;
        else if (c == kExtendNumLet)
          r = kInUnderscore;
        else if (st == kInLetter && (c == kMidLetter || c == kMidNumLet))
          r = kAfterLetterMid;
        else if (st == kInDigit && (c == kMidNum || c == kMidNumLet))
          r = kAfterDigitMid;
        else
          r = out | kBreak;
        // A run that started with '_' counts once it has a second character.
        if (st == kLoneUnderscore && wordish(c)) r |= kCount;
        t.next[st][c] = r;
      }
      t.next[kAfterLetterMid][c] = c == kLetter ? uint8_t{kInLetter} : uint8_t(out | kBreak | kBreakMid);
      t.next[kAfterDigitMid][c] = c == kDigit ? uint8_t{kInDigit} : uint8_t(out | kBreak | kBreakMid);
    }
    for (uint8_t st = 0; st < kStates; ++st)
      for (unsigned c = 0; c < 256; ++c) {
        uint8_t r1 = t.next[st][c >> 4], r2 = t.next[r1 & kStateBits][c & 15];
        t.next2[st][c] = static_cast<uint8_t>(((r1 >> 7) + (r2 >> 7)) << 6 | (r2 & kStateBits));
      }
    return t;
  }();
  return a;
}

inline uint64_t load8(const uint8_t* p) {
  uint64_t w;
  std::memcpy(&w, p, 8);
  return w;
}
// True when all eight bytes of `w` are ASCII letters (A-Z, a-z): ASCII,
// and with bit 0x20 set each in 0x61-0x7A (text.h's exact byte tests).
inline bool ascii_letters8(uint64_t w) {
  if (w & kHighBits) return false;
  uint64_t l = w | (kEachByte * 0x20);
  return (ascii_bytes_at_least(l, 0x61) & ascii_bytes_below(l, 0x7B)) == kHighBits;
}

// Walks `s` through the automaton: on_break(offset) for every boundary
// inside the text (in order), on_count() for every word, one call a
// character. False as soon as a character needs ICU (what was reported
// before then is to be thrown away).
template <typename OnBreak, typename OnCount>
bool walk_words(std::string_view s, OnBreak&& on_break, OnCount&& on_count) {
  const uint8_t* table = word_classes();
  const WordAutomaton& a = word_automaton();
  Utf8Cursor u(s);
  const uint8_t* p = reinterpret_cast<const uint8_t*>(s.data());
  const size_t n = s.size();
  size_t mid = 0;
  uint8_t st = kOut;
  while (!u.done()) {
    size_t at = u.pos();
    uint8_t c = class_at(table, u);
    if (c == kOther) return false;
    uint8_t r = a.next[st][c];
    if ((r & kBreakMid) != 0) on_break(static_cast<uint32_t>(mid));
    if ((r & kBreak) != 0 && at > 0) on_break(static_cast<uint32_t>(at));
    if ((r & kCount) != 0) on_count();
    st = r & kStateBits;
    if (st == kAfterLetterMid || st == kAfterDigitMid) mid = at;
    if (st == kInLetter) {
      // Inside a word, a letter changes nothing (next[kInLetter][kLetter]
      // is kInLetter without flags): skip the run of ASCII letters, eight
      // bytes at a time while all eight are A-Z or a-z, then by the table.
      size_t i = u.pos();
      while (i + 8 <= n && ascii_letters8(load8(p + i))) i += 8;
      while (i < n && p[i] < 0x80 && table[p[i]] == kLetter) ++i;
      u.seek(i);
    }
  }
  // Text that ends on a waiting mid-word character: it is a segment of its own.
  if (st == kAfterLetterMid || st == kAfterDigitMid) on_break(static_cast<uint32_t>(mid));
  return true;
}

void cut_words_icu(std::string_view s, const std::function<void(size_t, size_t, bool)>& fn) {
  if (s.empty()) return;
  UErrorCode st = U_ZERO_ERROR;
  UText ut = UTEXT_INITIALIZER;
  utext_openUTF8(&ut, s.data(), static_cast<int64_t>(s.size()), &st);
  icu::BreakIterator& bi = word_iterator();
  bi.setText(&ut, st);
  int32_t prev = bi.first();
  for (int32_t b = bi.next(); b != icu::BreakIterator::DONE; prev = b, b = bi.next()) {
    fn(static_cast<size_t>(prev), static_cast<size_t>(b), bi.getRuleStatus() >= UBRK_WORD_NONE_LIMIT);
  }
  utext_close(&ut);
}

thread_local std::vector<uint32_t> t_ends;
thread_local std::vector<bool> t_word;

}  // namespace

void cut_words(std::string_view s, const std::function<void(size_t, size_t, bool)>& fn) {
  t_ends.clear();
  t_word.assign(1, false);
  bool fast = walk_words(
      s,
      [](uint32_t at) {
        t_ends.push_back(at);
        t_word.push_back(false);
      },
      [] { t_word.back() = true; });
  if (!fast) {
    cut_words_icu(s, fn);
    return;
  }
  if (s.empty()) return;
  t_ends.push_back(static_cast<uint32_t>(s.size()));
  size_t begin = 0;
  for (size_t k = 0; k < t_ends.size(); ++k) {
    fn(begin, t_ends[k], t_word[k]);
    begin = t_ends[k];
  }
}

void word_segment_ends(std::string_view s, std::vector<uint32_t>& ends) {
  size_t had = ends.size();
  if (walk_words(s, [&](uint32_t at) { ends.push_back(at); }, [] {})) {
    if (!s.empty()) ends.push_back(static_cast<uint32_t>(s.size()));
    return;
  }
  ends.resize(had);
  cut_words_icu(s, [&](size_t, size_t e, bool) { ends.push_back(static_cast<uint32_t>(e)); });
}

void cut_words_reference(std::string_view s, const std::function<void(size_t, size_t, bool)>& fn) {
  cut_words_icu(s, fn);
}

namespace {

// Counts words with the automaton, two ASCII characters a step where it
// can; false if the text needs ICU.
bool count_words_fast(std::string_view s, size_t& count, size_t& chars) {
  const uint8_t* table = word_classes();
  const WordAutomaton& a = word_automaton();
  // The pair loop keeps its own 32-bit index (callgrind: a size_t index
  // shared with a cursor costs it ~2% more instructions on ASCII); the
  // cursor steps over the rest.
  const uint8_t* p = reinterpret_cast<const uint8_t*>(s.data());
  int32_t n = static_cast<int32_t>(s.size()), i = 0;
  size_t words = 0, steps = 0;
  uint8_t st = kOut, other = 0;
  while (i < n) {
    // Two ASCII characters at a time: half as many steps that wait for the
    // state before them.
    while (i + 1 < n && (p[i] | p[i + 1]) < 0x80) {
      uint8_t c1 = table[p[i]], c2 = table[p[i + 1]];
      other |= static_cast<uint8_t>((c1 == kOther) | (c2 == kOther));
      uint8_t r = a.next2[st][c1 << 4 | c2];
      words += r >> 6;
      st = r & 0x3F;
      i += 2;
      steps += 2;
    }
    if (i >= n) break;
    Utf8Cursor u(s, static_cast<size_t>(i));
    uint8_t c = class_at(table, u);
    i = static_cast<int32_t>(u.pos());
    if (c == kOther) return false;
    uint8_t r = a.next[st][c];
    words += r >> 7;
    st = r & kStateBits;
    ++steps;
  }
  if (other) return false;
  count = words;
  chars = steps;
  return true;
}

}  // namespace

size_t count_words(std::string_view s, size_t* chars) {
  size_t n = 0, c = 0;
  if (count_words_fast(s, n, c)) {
    if (chars) *chars = c;
    return n;
  }
  if (chars) *chars = count_code_points(s);
  n = 0;
  cut_words_icu(s, [&](size_t, size_t, bool w) { n += w; });
  return n;
}

size_t longest_word(std::string_view s) {
  size_t best = 0;
  cut_words(s, [&](size_t b, size_t e, bool w) {
    if (w) best = std::max(best, count_code_points(s.substr(b, e - b)));
  });
  return best;
}

void collapse_spaces(std::string& s) {
  size_t w = 0;
  bool space = true;  // drops leading spaces
  for (char c : s) {
    if (c == ' ') {
      if (!space) s[w++] = ' ';
      space = true;
    } else {
      s[w++] = c;
      space = false;
    }
  }
  if (w > 0 && s[w - 1] == ' ') --w;
  s.resize(w);
}

}  // namespace sheaf
