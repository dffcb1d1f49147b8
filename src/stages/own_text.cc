#include "stages/own_text.h"

#include <unicode/uchar.h>
#include <unicode/utf8.h>

#include <cctype>
#include <cstdint>
#include <vector>

#include "core/utf8.h"

namespace sheaf {

namespace {

inline bool ascii_alpha(unsigned char c) { return static_cast<unsigned char>((c | 0x20) - 'a') < 26; }
inline bool ascii_digit(unsigned char c) { return static_cast<unsigned char>(c - '0') < 10; }

// Length of the printf conversion at s[i] == '%' (C11 7.21.6.1: argument
// position, flags without the space flag, width, precision, length
// modifier, conversion), 0 if none. A space flag is left out so that
// "50% discount" is not read as a conversion.
size_t printf_at(std::string_view s, size_t i) {
  size_t j = i + 1, n = s.size();
  if (j < n && s[j] == '%') return 2;
  size_t k = j;
  while (k < n && ascii_digit(static_cast<unsigned char>(s[k]))) ++k;
  if (k > j && k < n && s[k] == '$') j = k + 1;
  while (j < n && (s[j] == '-' || s[j] == '+' || s[j] == '#' || s[j] == '0' || s[j] == '\'')) ++j;
  if (j < n && s[j] == '*') ++j;
  while (j < n && ascii_digit(static_cast<unsigned char>(s[j]))) ++j;
  if (j < n && s[j] == '.') {
    ++j;
    if (j < n && s[j] == '*') ++j;
    while (j < n && ascii_digit(static_cast<unsigned char>(s[j]))) ++j;
  }
  if (j + 1 < n && ((s[j] == 'h' && s[j + 1] == 'h') || (s[j] == 'l' && s[j + 1] == 'l'))) j += 2;
  else if (j < n && std::string_view("hljztLq").find(s[j]) != std::string_view::npos) ++j;
  if (j < n && std::string_view("diouxXeEfFgGaAcspnm").find(s[j]) != std::string_view::npos) return j + 1 - i;
  return 0;
}

// Length of the markup or placeholder span starting at s[i], 0 if none.
size_t span_at(std::string_view s, size_t i) {
  size_t n = s.size();
  switch (s[i]) {
    case '<': {  // a tag or <metavariable>
      for (size_t j = i + 1; j < n && j < i + 200; ++j) {
        if (s[j] == '<') return 0;
        if (s[j] == '>') return j > i + 1 ? j + 1 - i : 0;
      }
      return 0;
    }
    case '&': {  // &name; &#NN; &#xHH;
      size_t j = i + 1;
      if (j < n && s[j] == '#') {
        ++j;
        bool hex = j < n && (s[j] == 'x' || s[j] == 'X');
        j += hex;
        size_t d = j;
        while (j < n && j < d + 7 && (ascii_digit(static_cast<unsigned char>(s[j])) ||
                                      (hex && std::isxdigit(static_cast<unsigned char>(s[j])))))
          ++j;
        return j > d && j < n && s[j] == ';' ? j + 1 - i : 0;
      }
      size_t d = j;
      while (j < n && j < d + 10 && ascii_alpha(static_cast<unsigned char>(s[j]))) ++j;
      return j >= d + 2 && j < n && s[j] == ';' ? j + 1 - i : 0;
    }
    case '%':
      return printf_at(s, i);
    case '{': {  // {0} {name} {{name}}, no space inside
      size_t j = i + 1;
      bool twice = j < n && s[j] == '{';
      j += twice;
      for (; j < n && j < i + 64; ++j) {
        if (s[j] == '{' || s[j] == ' ') return 0;
        if (s[j] == '}') {
          if (twice) return j + 1 < n && s[j + 1] == '}' ? j + 2 - i : 0;
          return j + 1 - i;
        }
      }
      return 0;
    }
    case '$': {  // $NAME ${NAME}
      size_t j = i + 1;
      if (j < n && s[j] == '{') {
        for (; j < n && j < i + 64; ++j)
          if (s[j] == '}') return j + 1 - i;
        return 0;
      }
      while (j < n && (ascii_alpha(static_cast<unsigned char>(s[j])) || s[j] == '_' ||
                       (j > i + 1 && ascii_digit(static_cast<unsigned char>(s[j])))))
        ++j;
      return j > i + 1 ? j - i : 0;
    }
    default:
      return 0;
  }
}

// 40 bytes (it was 64: pushing a word was a fifth of the language stage's
// time). Counts fit 32 bits: a side is at most max_line_bytes (1 GiB) before
// normalization, which at most triples a word's letters.
struct Word {
  size_t begin, end;
  uint64_t hash;          // FNV-1a of the bytes, ASCII lowercased, '_' left out
  uint32_t letters;
  uint32_t upper, lower;  // ASCII letters by case
  bool digit;
  bool underscore;
  bool camel;             // an ASCII uppercase letter right after a lowercase one
};

// End of the token (white-space-separated) that holds s[i].
inline size_t token_end(std::string_view s, size_t i) {
  size_t e = s.find(' ', i);
  return e == std::string_view::npos ? s.size() : e;
}

// Appends to `out` every word of `s` outside markup, placeholders and
// skipped tokens (options, URLs, e-mail addresses). Tokens are found as the
// scan meets them: an option by its first bytes, an address when its "://"
// or '@' comes up, and then the words the token gave so far are taken back.
void collect(std::string_view s, std::vector<Word>& out) {
  out.clear();
  const uint8_t* p = reinterpret_cast<const uint8_t*>(s.data());
  size_t n = s.size(), i = 0, token = 0;  // token: where the current token began
  Word w{};
  bool in_word = false;
  auto close = [&](size_t at) {
    if (in_word) {
      // Field by field: a copy of the whole struct was compiled to wide
      // loads right after narrow stores, which stall (store forwarding).
      Word& d = out.emplace_back();
      d.begin = w.begin;
      d.end = at;
      d.hash = w.hash;
      d.letters = w.letters;
      d.upper = w.upper;
      d.lower = w.lower;
      d.digit = w.digit;
      d.underscore = w.underscore;
      d.camel = w.camel;
      in_word = false;
    }
  };
  auto open = [&](size_t at) {
    if (!in_word) {
      w = Word{};
      w.begin = w.end = at;
      w.hash = 0xcbf29ce484222325ULL;
      in_word = true;
    }
  };
  auto skip_rest = [&]() {  // drops the current token
    in_word = false;
    while (!out.empty() && out.back().begin >= token) out.pop_back();
    i = token_end(s, i);
  };
  auto mix = [&](uint8_t b) { w.hash = (w.hash ^ b) * 0x100000001b3ULL; };
  while (i < n) {
    uint8_t b = p[i];
    if (b < 0x80) {
      if (ascii_alpha(b) || ascii_digit(b) || b == '_') {
        // The run of ASCII word bytes, on locals: most of the text.
        open(i);
        uint64_t h = w.hash;
        uint32_t upper = 0, lower = 0;
        bool digit = false, underscore = false, camel = w.camel;
        size_t j = i;
        for (; j < n; ++j) {
          uint8_t c = p[j];
          if (static_cast<uint8_t>(c - 'a') < 26) {
            h = (h ^ c) * 0x100000001b3ULL;
            ++lower;
          } else if (static_cast<uint8_t>(c - 'A') < 26) {
            h = (h ^ (c | 0x20)) * 0x100000001b3ULL;
            ++upper;
            camel |= j > w.begin && static_cast<uint8_t>(p[j - 1] - 'a') < 26;
          } else if (ascii_digit(c)) {
            h = (h ^ c) * 0x100000001b3ULL;
            digit = true;
          } else if (c == '_') {
            underscore = true;
          } else {
            break;
          }
        }
        w.hash = h;
        w.upper += upper;
        w.lower += lower;
        w.letters += upper + lower;
        w.digit |= digit;
        w.underscore |= underscore;
        w.camel = camel;
        i = j;
        continue;
      }
      close(i);
      if (b == ' ') {
        token = ++i;
        continue;
      }
      if (i == token && b == '-' && i + 1 < n && (p[i + 1] == '-' || ascii_alpha(p[i + 1]))) {  // an option
        skip_rest();
        continue;
      }
      if (b == '.' && i == token + 3 && (s.substr(token, 3) == "www" || s.substr(token, 3) == "WWW")) {
        skip_rest();
        continue;
      }
      if (b == ':' && s.substr(i, 3) == "://") {
        skip_rest();
        continue;
      }
      if (b == '@' && i > token) {
        size_t e = token_end(s, i);
        if (s.find('.', i) < e) {
          skip_rest();
          continue;
        }
      }
      size_t k = span_at(s, i);
      i += k ? k : 1;
      continue;
    }
    Utf8Cursor u(s, i);
    UChar32 c = u.next();
    size_t j = u.pos();
    uint32_t mask = c < 0 ? 0 : U_GET_GC_MASK(c);
    if (mask & (U_GC_L_MASK | U_GC_M_MASK | U_GC_ND_MASK)) {
      open(i);
      for (size_t k = i; k < j; ++k) mix(p[k]);
      w.letters += (mask & U_GC_L_MASK) != 0;
      w.digit |= (mask & U_GC_ND_MASK) != 0;
    } else {
      close(i);
    }
    i = j;
  }
  close(n);
}

// FNV-1a of each '_'-separated part of s[begin, end), ASCII lowercased
// (the same hash Word::hash gives a word without '_').
template <typename Fn>
void part_hashes(std::string_view s, size_t begin, size_t end, Fn&& fn) {
  uint64_t h = 0xcbf29ce484222325ULL;
  bool any = false;
  for (size_t i = begin; i <= end; ++i) {
    if (i == end || s[i] == '_') {
      if (any) fn(h);
      h = 0xcbf29ce484222325ULL;
      any = false;
      continue;
    }
    auto b = static_cast<uint8_t>(s[i]);
    h = (h ^ (ascii_alpha(b) ? (b | 0x20) : b)) * 0x100000001b3ULL;
    any = true;
  }
}

}  // namespace

namespace {

// The words of the other side as a hash set (open addressing, in storage
// the caller lends), with the '_'-separated parts of words that hold '_'.
class OtherWords {
 public:
  OtherWords(std::string_view other, const std::vector<Word>& ws, std::vector<uint64_t>& storage) : set_(storage) {
    size_t cap = 16;
    while (cap < 2 * other.size()) cap <<= 1;
    set_.assign(cap, 0);
    mask_ = cap - 1;
    for (const Word& w : ws) {
      add(w.hash);
      if (w.underscore) part_hashes(other, w.begin, w.end, [&](uint64_t h) { add(h); });
    }
  }
  // True when the word (or, for a word with '_', each of its parts) is there.
  bool has(std::string_view side, const Word& w) const {
    if (has(w.hash)) return true;
    if (!w.underscore) return false;
    bool all = true;
    part_hashes(side, w.begin, w.end, [&](uint64_t h) { all &= has(h); });
    return all;
  }

 private:
  size_t slot(uint64_t h) const {
    size_t k = (h * 0x9E3779B97F4A7C15ULL) >> 40 & mask_;
    while (set_[k] != 0 && set_[k] != h) k = (k + 1) & mask_;
    return k;
  }
  void add(uint64_t h) { set_[slot(h | 1)] = h | 1; }
  bool has(uint64_t h) const { return set_[slot(h | 1)] == (h | 1); }
  std::vector<uint64_t>& set_;  // 0 marks an empty slot
  size_t mask_ = 0;
};

// Per-thread scratch: each side's words and each side's word set.
struct Scratch {
  std::vector<Word> words[2];
  std::vector<uint64_t> sets[2];
};
Scratch& scratch() {
  thread_local Scratch s;
  return s;
}

// Writes the own words of `side` among `ws` to `out`; returns their letters.
size_t own_words(std::string_view side, const std::vector<Word>& ws, const OtherWords& theirs, std::string& out) {
  out.clear();
  size_t letters = 0;
  for (const Word& w : ws) {
    if (w.digit || w.letters == 0 || w.camel) continue;
    if (w.underscore && w.letters == 1) continue;                        // a menu accelerator: _F
    if (w.upper >= 2 && w.lower == 0 && w.upper == w.letters) continue;  // an acronym or metavariable: GID, FILE
    if (theirs.has(side, w)) continue;
    if (!out.empty()) out.push_back(' ');
    for (size_t i = w.begin; i < w.end; ++i)
      if (side[i] != '_') out.push_back(side[i]);
    letters += w.letters;
  }
  return letters;
}

}  // namespace

size_t own_text(std::string_view side, std::string_view other, std::string& out) {
  Scratch& s = scratch();
  collect(side, s.words[0]);
  collect(other, s.words[1]);
  OtherWords theirs(other, s.words[1], s.sets[0]);
  return own_words(side, s.words[0], theirs, out);
}

void own_texts(std::string_view source, std::string_view target, std::string out[2], size_t letters[2]) {
  Scratch& s = scratch();
  collect(source, s.words[0]);
  collect(target, s.words[1]);
  OtherWords of_target(target, s.words[1], s.sets[0]), of_source(source, s.words[0], s.sets[1]);
  letters[0] = own_words(source, s.words[0], of_target, out[0]);
  letters[1] = own_words(target, s.words[1], of_source, out[1]);
}

WordShare shared_words(std::string_view side, std::string_view other) {
  Scratch& s = scratch();
  collect(side, s.words[0]);
  collect(other, s.words[1]);
  OtherWords theirs(other, s.words[1], s.sets[0]);
  WordShare r;
  auto capitals = [](const Word& w) { return w.upper >= 2 && w.lower == 0 && w.upper == w.letters; };
  // An acronym or metavariable (RTS, FILE) is kept as it is in a
  // translation: copied, it says nothing of whether the rest is. Unless the
  // whole side is in capitals (a heading, a warning): then its words count.
  bool all_capitals = true;
  for (const Word& w : s.words[0])
    if (!w.digit && w.letters > 0 && !capitals(w)) all_capitals = false;
  for (const Word& w : s.words[0]) {
    if (w.digit || w.letters == 0) continue;
    if (!all_capitals && capitals(w)) continue;
    ++r.words;
    r.shared += theirs.has(side, w);
  }
  return r;
}

}  // namespace sheaf
