#include "core/text.h"

#include "core/error.h"

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
  const uint8_t* p = reinterpret_cast<const uint8_t*>(s.data());
  int32_t n = static_cast<int32_t>(s.size());
  int32_t i = 0;
  while (i < n) {
    if (p[i] < 0x80) {
      ++i;
      continue;
    }
    UChar32 c;
    U8_NEXT(p, i, n, c);
    if (c < 0) return false;
  }
  return true;
}

size_t repair_utf8(std::string_view s, std::string& out) {
  const uint8_t* p = reinterpret_cast<const uint8_t*>(s.data());
  int32_t n = static_cast<int32_t>(s.size());
  int32_t i = 0;
  size_t repairs = 0;
  while (i < n) {
    int32_t start = i;
    UChar32 c;
    U8_NEXT(p, i, n, c);
    if (c < 0) {
      out += "\xEF\xBF\xBD";
      ++repairs;
    } else {
      out.append(s.data() + start, static_cast<size_t>(i - start));
    }
  }
  return repairs;
}

size_t count_code_points(std::string_view s) {
  size_t n = 0;
  for (unsigned char c : s) n += (c & 0xC0) != 0x80;
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

// The class of the code point at p[i], advancing i; kOther for anything the
// fast path leaves to ICU (including ill-formed UTF-8 and supplementary
// planes).
inline uint8_t class_at(const uint8_t* table, const uint8_t* p, int32_t n, int32_t& i) {
  UChar32 c;
  if (p[i] < 0x80) {
    c = p[i++];
  } else {
    U8_NEXT(p, i, n, c);
    if (c < 0 || c > 0xFFFF) return kOther;
  }
  return table[c];
}

// Classes of every code point of `s` with their byte offsets; false if a
// character needs ICU.
bool classify_simple(std::string_view s, std::vector<std::pair<uint32_t, uint8_t>>& out) {
  const uint8_t* table = word_classes();
  const uint8_t* p = reinterpret_cast<const uint8_t*>(s.data());
  int32_t n = static_cast<int32_t>(s.size()), i = 0;
  out.clear();
  while (i < n) {
    int32_t at = i;
    uint8_t k = class_at(table, p, n, i);
    if (k == kOther) return false;
    out.emplace_back(static_cast<uint32_t>(at), k);
  }
  return true;
}

// Segments classified text; fn(begin, end, is_word).
template <typename Fn>
void segment_simple(std::string_view s, const std::vector<std::pair<uint32_t, uint8_t>>& cls, Fn&& fn) {
  size_t n = cls.size();
  auto off = [&](size_t k) { return k < n ? static_cast<size_t>(cls[k].first) : s.size(); };
  size_t k = 0;
  while (k < n) {
    uint8_t c = cls[k].second;
    size_t start = k;
    if (c == kSpace) {
      while (k < n && cls[k].second == kSpace) ++k;
      fn(off(start), off(k), false);
      continue;
    }
    if (c == kLetter || c == kDigit || c == kExtendNumLet) {
      bool word = true;
      ++k;
      while (k < n) {
        uint8_t prev = cls[k - 1].second, cur = cls[k].second;
        uint8_t next = k + 1 < n ? cls[k + 1].second : uint8_t{kOther};
        if (cur == kLetter || cur == kDigit || cur == kExtendNumLet) {
          ++k;
        } else if ((cur == kMidLetter || cur == kMidNumLet) && prev == kLetter && next == kLetter) {
          k += 2;
        } else if ((cur == kMidNum || cur == kMidNumLet) && prev == kDigit && next == kDigit) {
          k += 2;
        } else {
          break;
        }
      }
      // ICU gives a run of '_' a word status only when it is longer than one.
      if (c == kExtendNumLet && k - start == 1) word = false;
      fn(off(start), off(k), word);
      continue;
    }
    ++k;
    fn(off(start), off(k), false);
  }
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

thread_local std::vector<std::pair<uint32_t, uint8_t>> t_classes;

}  // namespace

void cut_words(std::string_view s, const std::function<void(size_t, size_t, bool)>& fn) {
  if (classify_simple(s, t_classes)) {
    segment_simple(s, t_classes, fn);
    return;
  }
  cut_words_icu(s, fn);
}

namespace {

inline bool wordish(uint8_t c) { return c == kLetter || c == kDigit || c == kExtendNumLet; }

// segment_simple's rules while decoding, with no class vector: the end of
// every segment appended to `ends`. False (and `ends` as it was) if a
// character needs ICU.
bool segment_fast(std::string_view s, std::vector<uint32_t>& ends) {
  const uint8_t* table = word_classes();
  const uint8_t* p = reinterpret_cast<const uint8_t*>(s.data());
  int32_t n = static_cast<int32_t>(s.size()), i = 0;
  size_t had = ends.size();
  auto fail = [&] {
    ends.resize(had);
    return false;
  };
  while (i < n) {
    uint8_t c = class_at(table, p, n, i);
    if (c == kOther) return fail();
    if (c == kSpace) {
      while (i < n && p[i] == ' ') ++i;  // ' ' is the only character of this class
    } else if (wordish(c)) {
      // Letters, digits and '_', joined across one mid-word character
      // between two letters (WB6, WB7) or two digits (WB11, WB12).
      uint8_t prev = c;
      while (i < n) {
        int32_t j = i;
        uint8_t d = class_at(table, p, n, j);
        if (wordish(d)) {
          prev = d;
          i = j;
          continue;
        }
        bool mid_letter = (d == kMidLetter || d == kMidNumLet) && prev == kLetter;
        bool mid_num = (d == kMidNum || d == kMidNumLet) && prev == kDigit;
        if (!(mid_letter || mid_num) || j >= n) break;
        int32_t k = j;
        uint8_t e = class_at(table, p, n, k);
        if ((mid_letter && e == kLetter) || (mid_num && e == kDigit)) {
          prev = e;
          i = k;
          continue;
        }
        break;
      }
    }
    ends.push_back(static_cast<uint32_t>(i));
  }
  return true;
}

}  // namespace

void word_segment_ends(std::string_view s, std::vector<uint32_t>& ends) {
  if (segment_fast(s, ends)) return;
  cut_words_icu(s, [&](size_t, size_t e, bool) { ends.push_back(static_cast<uint32_t>(e)); });
}

void cut_words_reference(std::string_view s, const std::function<void(size_t, size_t, bool)>& fn) {
  cut_words_icu(s, fn);
}

namespace {

// Counting words as a finite automaton over word classes, with the rules of
// segment_simple: a word is a run of letters, digits and '_' (not a lone
// '_'), joined across one mid-word character between two letters (WB6, WB7)
// or two digits (WB11, WB12). A word is counted at its first character, or
// at its second when it starts with '_'. After a mid-word character the
// automaton waits for the next one: if that does not go on with the word,
// it is read as if outside a word (each waiting state's row is the outside
// row for such characters), and the mid-word character was not part of it.
enum WordState : uint8_t {
  kOut,
  kInLetter,
  kInDigit,
  kInUnderscore,
  kLoneUnderscore,
  kAfterLetterMid,
  kAfterDigitMid,
  kStates
};
struct WordAutomaton {
  uint8_t next[kStates][16];  // low 7 bits: the next state; high bit: a word is counted here
  // Two characters at a time (classes c1 * 16 + c2): low 6 bits: the state
  // after both; high 2 bits: the words counted on the way.
  uint8_t next2[kStates][256];
};

const WordAutomaton& word_automaton() {
  static const WordAutomaton a = [] {
    WordAutomaton t{};
    constexpr uint8_t kCount = 0x80;
    for (uint8_t c = 0; c < 16; ++c) {
      uint8_t out = c == kLetter         ? uint8_t{kInLetter | kCount}
                    : c == kDigit        ? uint8_t{kInDigit | kCount}
                    : c == kExtendNumLet ? uint8_t{kLoneUnderscore}
                                         : uint8_t{kOut};
      t.next[kOut][c] = out;
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
          r = kOut;
        // A run that started with '_' counts once it has a second character.
        if (st == kLoneUnderscore && (c == kLetter || c == kDigit || c == kExtendNumLet)) r |= kCount;
        t.next[st][c] = r;
      }
      t.next[kAfterLetterMid][c] = c == kLetter ? uint8_t{kInLetter} : out;
      t.next[kAfterDigitMid][c] = c == kDigit ? uint8_t{kInDigit} : out;
    }
    for (uint8_t st = 0; st < kStates; ++st)
      for (unsigned c = 0; c < 256; ++c) {
        uint8_t r1 = t.next[st][c >> 4], r2 = t.next[r1 & 0x7F][c & 15];
        t.next2[st][c] = static_cast<uint8_t>(((r1 >> 7) + (r2 >> 7)) << 6 | (r2 & 0x7F));
      }
    return t;
  }();
  return a;
}

// Counts words without storing classes; false if the text needs ICU.
bool count_words_fast(std::string_view s, size_t& count, size_t& chars) {
  const uint8_t* table = word_classes();
  const WordAutomaton& a = word_automaton();
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
    uint8_t c;
    if (p[i] < 0x80) {
      c = table[p[i++]];
    } else {
      UChar32 cp;
      U8_NEXT(p, i, n, cp);
      if (cp < 0 || cp > 0xFFFF) return false;
      c = table[cp];
    }
    if (c == kOther) return false;
    uint8_t r = a.next[st][c];
    words += r >> 7;
    st = r & 0x7F;
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
