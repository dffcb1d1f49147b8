#include "core/text.h"

#include <unicode/brkiter.h>
#include <unicode/utext.h>
#include <unicode/utf8.h>

#include <cstring>
#include <memory>
#include <stdexcept>

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
    if (U_FAILURE(st)) throw std::runtime_error(std::string("ICU word iterator: ") + u_errorName(st));
    return bi;
  }();
  thread_local std::unique_ptr<icu::BreakIterator> mine(prototype->clone());
  return *mine;
}

}  // namespace

void cut_words(std::string_view s, const std::function<void(size_t, size_t, bool)>& fn) {
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

size_t count_words(std::string_view s) {
  size_t n = 0;
  cut_words(s, [&](size_t, size_t, bool w) { n += w; });
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
