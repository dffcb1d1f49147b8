// Word boundaries, scripts and hashes against published references.
#include <gtest/gtest.h>

#include "test_util.h"
#include <unicode/utf8.h>
#include <xxhash.h>

#include <fstream>
#include <map>
#include <random>
#include <set>
#include <sstream>
#include <tuple>

#include "core/text.h"
#include "stages/script.h"

namespace sheaf {
namespace {


// Source: Unicode 15.0 auxiliary/WordBreakTest.txt (UAX #29 test data, Debian
// package unicode-data). "÷" marks a boundary, "×" none; our word cutter's
// boundaries must be exactly the "÷" positions.
TEST(WordBoundaries, MatchWordBreakTestTxt) {
  std::ifstream in("/usr/share/unicode/auxiliary/WordBreakTest.txt");
  ASSERT_TRUE(in) << "unicode-data is needed (scripts/install-deps build test)";
  std::string line;
  size_t checked = 0;
  std::vector<std::string> failures;
  while (std::getline(in, line)) {
    line = line.substr(0, line.find('#'));
    if (line.find_first_not_of(" \t") == std::string::npos) continue;
    std::istringstream toks(line);
    std::string tok, text;
    std::set<size_t> expected;
    bool surrogate = false;
    while (toks >> tok) {
      if (tok == "\xC3\xB7") {  // ÷
        expected.insert(text.size());
      } else if (tok == "\xC3\x97") {  // ×
      } else {
        UChar32 c = static_cast<UChar32>(std::stoul(tok, nullptr, 16));
        if (c >= 0xD800 && c <= 0xDFFF) surrogate = true;
        text += test::utf8_of(c);
      }
    }
    if (surrogate) continue;  // not representable in UTF-8
    std::set<size_t> got = {0};
    cut_words(text, [&](size_t, size_t e, bool) { got.insert(e); });
    if (got != expected) {
      failures.push_back(line);
      continue;
    }
    ++checked;
  }
  EXPECT_GT(checked, 1800u);
  // ICU follows CLDR's root tailoring of UAX #29, which takes the colon out
  // of MidLetter (so "a:b" is three segments; Swedish "S:t" needs a locale).
  // That is the only difference allowed (from ICU's word rules, quoted from
  // memory: $MidLetter = [\p{Word_Break = MidLetter} - [\: \uFE55 \uFF1A]]).
  EXPECT_LE(failures.size(), 20u);
  for (const auto& f : failures) EXPECT_NE(f.find("003A"), std::string::npos) << f;
}

// The fast path for simple text against ICU alone, on generated text made of
// characters of every class the fast path handles and some it must leave to
// ICU: boundaries and word flags must be identical.
TEST(WordBoundaries, FastPathAgreesWithIcuOnGeneratedText) {
  const std::vector<std::string> parts = {
      "a",      "B",      "z",      "7",          "0",          " ",      "  ",     ".",      "'",
      ",",      ";",      ":",      "_",          "-",          "!",      "?",      "\"",     "(",
      "/",      "+",      "@",      "\u00e9",     "\u00f1",     "\u00df", "\u00dc", "\u0430", "\u0416",
      "\u03b1", "\u2019", "\u2018", "\u00b7",     "\u00bf",     "\u00a1", "\u00ab", "\u00bb", "\u20ac",
      "\u2024", "\uff0e", "\u0660", "\u066b",     "\u0301",     "\u3000", "\u4e2d", "\u3042", "\u30a2",
      "\u05d0", "\u0e01", "\t",     "\U0001F600", "\U0001F1EA", "\u200d", "\u00ad", "\u2060", "\u0131"};
  std::mt19937 rng(2024);
  size_t fast = 0;
  for (int trial = 0; trial < 20000; ++trial) {
    std::string s;
    int n = 1 + static_cast<int>(rng() % 12);
    // Mostly simple text, sometimes one character the fast path refuses.
    for (int i = 0; i < n; ++i) s += parts[rng() % (trial % 3 == 0 ? parts.size() : 40)];
    std::vector<std::tuple<size_t, size_t, bool>> a, b;
    cut_words(s, [&](size_t x, size_t y, bool w) { a.emplace_back(x, y, w); });
    cut_words_reference(s, [&](size_t x, size_t y, bool w) { b.emplace_back(x, y, w); });
    ASSERT_EQ(a, b) << "text: [" << s << "]";
    std::vector<uint32_t> ends;
    word_segment_ends(s, ends);
    ASSERT_EQ(ends.size(), b.size()) << s;
    for (size_t k = 0; k < ends.size(); ++k) ASSERT_EQ(ends[k], std::get<1>(b[k])) << s;
    size_t words = 0;
    for (const auto& [x, y, w] : b) words += w;
    ASSERT_EQ(count_words(s), words) << s;
    size_t chars = 0;
    ASSERT_EQ(count_words(s, &chars), words) << s;
    ASSERT_EQ(chars, count_code_points(s)) << s;
    fast += trial % 3 != 0;
  }
  EXPECT_GT(fast, 10000u);
}

// Inside a word the walk skips runs of ASCII letters eight bytes at a time:
// long runs beside the bytes just outside A-Z and a-z ('@' is a letter to
// ICU, '[', '`', '{' are not), held to ICU (Unicode's WordBreakProperty via
// ICU's root rules).
TEST(WordBoundaries, LongLetterRunsAgreeWithIcu) {
  const std::vector<std::string> parts = {"abcdefgh", "ABCDEFGHIJKLMNOP", "xyzXYZ", "Zz", "a", "@", "[", "`",
                                          "{",        "_",                "'",      ".",  " ", "\u00e9", "1", "Q"};
  std::mt19937 rng(808);
  for (int trial = 0; trial < 5000; ++trial) {
    std::string s;
    for (int i = 1 + static_cast<int>(rng() % 14); i > 0; --i) s += parts[rng() % parts.size()];
    std::vector<std::tuple<size_t, size_t, bool>> b;
    cut_words_reference(s, [&](size_t x, size_t y, bool w) { b.emplace_back(x, y, w); });
    std::vector<uint32_t> ends;
    word_segment_ends(s, ends);
    ASSERT_EQ(ends.size(), b.size()) << s;
    for (size_t k = 0; k < ends.size(); ++k) ASSERT_EQ(ends[k], std::get<1>(b[k])) << s;
  }
}

TEST(WordBoundaries, CountsWordsNotSpacesOrPunctuation) {
  // "9:30" is two numbers (the colon is not MidNum), "doesn't" one word.
  EXPECT_EQ(count_words("The garden opens at 9:30, doesn't it?"), 8u);
  EXPECT_EQ(count_words(""), 0u);
  EXPECT_EQ(count_words(" ... "), 0u);
  // Japanese has no spaces; ICU's dictionary cuts it into several words.
  EXPECT_GT(count_words("\u5ead\u5712\u306f\u671d\u4e5d\u6642\u306b\u958b\u304d\u307e\u3059"), 2u);
  EXPECT_EQ(longest_word("a bb ccc"), 3u);
}

// Source: Unicode 15.0 Scripts.txt (Debian package unicode-data). For letters
// of each script in our language table, count_scripts must agree with the
// file: the letter counts, and counts as expected only for its own script.
TEST(Scripts, MatchScriptsTxt) {
  std::ifstream in("/usr/share/unicode/Scripts.txt");
  ASSERT_TRUE(in);
  const std::map<std::string, UScriptCode> wanted = {
      {"Latin", USCRIPT_LATIN},       {"Cyrillic", USCRIPT_CYRILLIC},
      {"Greek", USCRIPT_GREEK},       {"Han", USCRIPT_HAN},
      {"Hiragana", USCRIPT_HIRAGANA}, {"Katakana", USCRIPT_KATAKANA},
      {"Arabic", USCRIPT_ARABIC},     {"Hebrew", USCRIPT_HEBREW},
      {"Hangul", USCRIPT_HANGUL},     {"Devanagari", USCRIPT_DEVANAGARI},
      {"Thai", USCRIPT_THAI},         {"Georgian", USCRIPT_GEORGIAN},
  };
  std::map<UScriptCode, ScriptTable> tables;
  for (const auto& [name, code] : wanted) tables.emplace(code, ScriptTable({code}));
  std::string line;
  std::map<std::string, size_t> checked;
  size_t n = 0;
  while (std::getline(in, line)) {
    if (line.empty() || line[0] == '#') continue;
    // "0041..005A    ; Latin # L&  [26] LATIN CAPITAL LETTER A..."
    size_t semi = line.find(';'), hash = line.find('#');
    std::string range = line.substr(0, semi);
    std::string script = line.substr(semi + 1, hash - semi - 1);
    script.erase(0, script.find_first_not_of(' '));
    script.erase(script.find_last_not_of(' ') + 1);
    std::string gc = line.substr(hash + 1);
    gc.erase(0, gc.find_first_not_of(' '));
    auto it = wanted.find(script);
    if (it == wanted.end() || gc[0] != 'L') continue;
    UChar32 lo = static_cast<UChar32>(std::stoul(range, nullptr, 16)), hi = lo;
    if (size_t dots = range.find(".."); dots != std::string::npos)
      hi = static_cast<UChar32>(std::stoul(range.substr(dots + 2), nullptr, 16));
    for (UChar32 c = lo; c <= hi; ++c) {
      if (++n % 7 != 0 && script == "Han") continue;  // a sample of the 98,000 ideographs
      std::string s = test::utf8_of(c);
      ScriptCount own = count_scripts(s, {it->second});
      ScriptCount fast = tables.at(it->second).count(s);
      ASSERT_EQ(fast.letters, own.letters) << std::hex << c;
      ASSERT_EQ(fast.expected, own.expected) << std::hex << c;
      ScriptCount other = count_scripts(s, {it->second == USCRIPT_LATIN ? USCRIPT_CYRILLIC : USCRIPT_LATIN});
      ASSERT_EQ(own.letters, 1u) << std::hex << c << " " << script;
      ASSERT_EQ(own.expected, 1u) << std::hex << c << " " << script;
      ASSERT_EQ(other.expected, 0u) << std::hex << c << " " << script;
      ++checked[script];
    }
  }
  for (const auto& [name, code] : wanted) EXPECT_GT(checked[name], 10u) << name;
}

// The table's eight-bytes-at-a-time path for ASCII against ICU's script
// property (count_scripts), on generated text of every ASCII byte and some
// letters of other scripts, at every alignment.
TEST(Scripts, TableAgreesWithIcuOnMixedText) {
  const std::vector<std::string> other = {"\u00e9", "\u0416", "\u03b1", "\u4e2d", "\u0301", "\U0001F600", "\u05d0"};
  std::mt19937 rng(9);
  for (UScriptCode code : {USCRIPT_LATIN, USCRIPT_CYRILLIC}) {
    ScriptTable table({code});
    for (int trial = 0; trial < 5000; ++trial) {
      std::string s;
      int n = static_cast<int>(rng() % 40);
      for (int i = 0; i < n; ++i) {
        if (rng() % 8 == 0)
          s += other[rng() % other.size()];
        else
          s += static_cast<char>(rng() % 128);
      }
      ScriptCount want = count_scripts(s, {code}), got = table.count(s);
      ASSERT_EQ(got.letters, want.letters) << s;
      ASSERT_EQ(got.expected, want.expected) << s;
    }
  }
}

TEST(Scripts, CommonAndInheritedAreNotCounted) {
  ScriptCount c = count_scripts("123 !? \u0301 \u3001", {USCRIPT_LATIN});
  EXPECT_EQ(c.letters, 0u);
}

TEST(Scripts, LanguageTable) {
  EXPECT_EQ(scripts_for_language("es"), (std::vector<std::string>{"Latn"}));
  EXPECT_EQ(scripts_for_language("ja"), (std::vector<std::string>{"Hani", "Hira", "Kana"}));
  EXPECT_EQ(scripts_for_language("zh-Hant"), (std::vector<std::string>{"Hani"}));
  EXPECT_EQ(scripts_for_language("ru"), (std::vector<std::string>{"Cyrl"}));
  EXPECT_TRUE(scripts_for_language("xx").empty());
}

// Source: the xxHash test values for empty input (xxHash documentation and
// its command-line self-test; the values are quoted from memory and checked
// here against the library): XXH32 02CC5D05, XXH64 EF46DB3751D8E999,
// XXH3_64bits 2D06800538D394C2, XXH3_128bits 99AA06D3014798D86001C324468D497F.
TEST(Hashes, MatchPublishedValuesForEmptyInput) {
  EXPECT_EQ(XXH32("", 0, 0), 0x02CC5D05u);
  EXPECT_EQ(XXH64("", 0, 0), 0xEF46DB3751D8E999ULL);
  EXPECT_EQ(XXH3_64bits("", 0), 0x2D06800538D394C2ULL);
  XXH128_hash_t h = XXH3_128bits("", 0);
  EXPECT_EQ(h.high64, 0x99AA06D3014798D8ULL);
  EXPECT_EQ(h.low64, 0x6001C324468D497FULL);
}

}  // namespace
}  // namespace sheaf

namespace sheaf {
namespace {

// The bit-parallel byte tests of core/text.h against a byte loop: every
// byte value in every lane, beside every value in the lane below it (where
// a borrow or carry would leak in), for every threshold.
TEST(BitParallel, ByteTestsAreExactInEveryLane) {
  for (int lane = 0; lane < 8; ++lane) {
    for (unsigned b = 0; b < 256; ++b) {
      for (unsigned below : {0u, 1u, 0x1Fu, 0x20u, 0x21u, 0x7Fu, 0x80u, 0xFFu}) {
        uint64_t v = 0x4141414141414141ULL;  // 'A' elsewhere
        v &= ~(uint64_t{0xFF} << (8 * lane));
        v |= uint64_t{b} << (8 * lane);
        if (lane > 0) {
          v &= ~(uint64_t{0xFF} << (8 * (lane - 1)));
          v |= uint64_t{below} << (8 * (lane - 1));
        }
        for (int k = 0; k < 8; ++k) {
          uint8_t byte = static_cast<uint8_t>(v >> (8 * k));
          uint64_t bit = uint64_t{0x80} << (8 * k);
          ASSERT_EQ((bytes_zero(v) & bit) != 0, byte == 0) << std::hex << v;
          ASSERT_EQ((bytes_equal(v, ' ') & bit) != 0, byte == ' ') << std::hex << v;
          ASSERT_EQ((bytes_equal(v, 0x7F) & bit) != 0, byte == 0x7F) << std::hex << v;
          if (byte >= 0x80) continue;  // the ascii_ tests speak of ASCII bytes only
          uint64_t ascii_lanes = 0;
          for (int m = 0; m < 8; ++m)
            if (static_cast<uint8_t>(v >> (8 * m)) < 0x80) ascii_lanes |= uint64_t{0x80} << (8 * m);
          if ((~ascii_lanes & kHighBits) != 0) continue;  // a non-ASCII byte elsewhere: masked in use
          for (unsigned t : {1u, 0x20u, 0x21u, 0x61u, 0x7Bu, 0x80u}) {
            ASSERT_EQ((ascii_bytes_at_least(v, static_cast<uint8_t>(t)) & bit) != 0, byte >= t) << std::hex << v;
            ASSERT_EQ((ascii_bytes_below(v, static_cast<uint8_t>(t)) & bit) != 0, byte < t) << std::hex << v;
          }
        }
      }
    }
  }
}

}  // namespace
}  // namespace sheaf
