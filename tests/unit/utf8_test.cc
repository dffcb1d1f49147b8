// core/utf8.h's cursor against outside references:
//  - ICU's U8_NEXT (a general-purpose reference library), on every scalar
//    value U+0000..U+10FFFF encoded, in context, and on random bytes;
//  - the Unicode Standard, chapter 3 (version 15.0): Table 3-7
//    ("Well-Formed UTF-8 Byte Sequences") for the edges of each row, and
//    section 3.9's worked examples of "U+FFFD Substitution of Maximal
//    Subparts" (Tables 3-8 to 3-11). The byte rows of those four tables
//    are written from memory of the standard's text; U8_NEXT is checked
//    against the same expectations, so a row copied wrongly would show here.
#include "core/utf8.h"

#include <gtest/gtest.h>

#include "test_util.h"
#include <unicode/utf8.h>

#include <random>
#include <string>
#include <vector>

namespace sheaf {
namespace {

struct Step {
  UChar32 c;
  size_t len;
  bool operator==(const Step& o) const { return c == o.c && len == o.len; }
};

std::vector<Step> cursor_steps(std::string_view s) {
  std::vector<Step> out;
  Utf8Cursor u(s);
  while (!u.done()) {
    size_t at = u.pos();
    UChar32 c = u.next();
    out.push_back({c < 0 ? -1 : c, u.pos() - at});
  }
  return out;
}

// The reference: ICU's macro on the raw bytes, nothing of ours in between.
std::vector<Step> icu_steps(std::string_view s) {
  std::vector<Step> out;
  const uint8_t* p = reinterpret_cast<const uint8_t*>(s.data());
  int32_t n = static_cast<int32_t>(s.size()), i = 0;
  while (i < n) {
    int32_t at = i;
    UChar32 c;
    U8_NEXT(p, i, n, c);
    out.push_back({c < 0 ? -1 : c, static_cast<size_t>(i - at)});
  }
  return out;
}

std::string bytes(std::initializer_list<int> b) {
  std::string s;
  for (int x : b) s += static_cast<char>(x);
  return s;
}


TEST(Utf8Cursor, EveryScalarValueAgreesWithIcu) {
  for (UChar32 c = 0; c <= 0x10FFFF; ++c) {
    if (c >= 0xD800 && c <= 0xDFFF) continue;
    std::string e = test::utf8_of(c);
    // Alone, then between ASCII and another character (the cursor must stop
    // exactly at the sequence's end).
    Utf8Cursor u(e);
    ASSERT_EQ(u.next(), c) << std::hex << c;
    ASSERT_TRUE(u.done());
    ASSERT_EQ(u.pos(), static_cast<size_t>(U8_LENGTH(c)));
    ASSERT_EQ(utf8_lead_length(static_cast<uint8_t>(e[0])), e.size()) << std::hex << c;
    for (size_t k = 1; k < e.size(); ++k) ASSERT_TRUE(utf8_continuation(static_cast<uint8_t>(e[k])));
    ASSERT_FALSE(utf8_continuation(static_cast<uint8_t>(e[0])));
    std::string ctx = "a" + e + "\xC3\xA9";
    ASSERT_EQ(cursor_steps(ctx), icu_steps(ctx)) << std::hex << c;
    ASSERT_EQ(cursor_steps(ctx).size(), 3u);
  }
}

TEST(Utf8Cursor, SurrogatesAreIllFormed) {
  // Table 3-7: after ED the second byte is 80..9F; ED A0..BF would encode a
  // surrogate. ED alone is the maximal subpart, then each trailing byte.
  for (UChar32 c = 0xD800; c <= 0xDFFF; ++c) {
    std::string e = test::utf8_of(c);
    std::vector<Step> want = {{-1, 1}, {-1, 1}, {-1, 1}};
    ASSERT_EQ(cursor_steps(e), want) << std::hex << c;
    ASSERT_EQ(icu_steps(e), want);
  }
}

// Table 3-7, row by row: the edges just inside each row's ranges are one
// character; the bytes just outside start no well-formed sequence.
TEST(Utf8Cursor, Table3_7Edges) {
  struct Case {
    std::string s;
    std::vector<Step> want;
  };
  const std::vector<Case> cases = {
      {bytes({0x7F}), {{0x7F, 1}}},
      {bytes({0x80}), {{-1, 1}}},                              // a continuation byte alone
      {bytes({0xC0, 0x80}), {{-1, 1}, {-1, 1}}},               // C0, C1 never occur
      {bytes({0xC1, 0xBF}), {{-1, 1}, {-1, 1}}},
      {bytes({0xC2, 0x80}), {{0x80, 2}}},                      // row C2..DF 80..BF
      {bytes({0xDF, 0xBF}), {{0x7FF, 2}}},
      {bytes({0xC2, 0xC0}), {{-1, 1}, {-1, 1}}},
      {bytes({0xE0, 0x9F, 0x80}), {{-1, 1}, {-1, 1}, {-1, 1}}},  // E0 needs A0..BF
      {bytes({0xE0, 0xA0, 0x80}), {{0x800, 3}}},
      {bytes({0xE1, 0x80, 0x80}), {{0x1000, 3}}},              // row E1..EC
      {bytes({0xEC, 0xBF, 0xBF}), {{0xCFFF, 3}}},
      {bytes({0xED, 0x9F, 0xBF}), {{0xD7FF, 3}}},              // ED needs 80..9F
      {bytes({0xEE, 0x80, 0x80}), {{0xE000, 3}}},              // row EE..EF
      {bytes({0xEF, 0xBF, 0xBF}), {{0xFFFF, 3}}},
      {bytes({0xF0, 0x8F, 0xBF, 0xBF}), {{-1, 1}, {-1, 1}, {-1, 1}, {-1, 1}}},  // F0 needs 90..BF
      {bytes({0xF0, 0x90, 0x80, 0x80}), {{0x10000, 4}}},
      {bytes({0xF3, 0xBF, 0xBF, 0xBF}), {{0xFFFFF, 4}}},       // row F1..F3
      {bytes({0xF4, 0x8F, 0xBF, 0xBF}), {{0x10FFFF, 4}}},      // F4 needs 80..8F
      {bytes({0xF4, 0x90, 0x80, 0x80}), {{-1, 1}, {-1, 1}, {-1, 1}, {-1, 1}}},
      {bytes({0xF5, 0x80, 0x80, 0x80}), {{-1, 1}, {-1, 1}, {-1, 1}, {-1, 1}}},  // F5..FF never occur
      {bytes({0xFF}), {{-1, 1}}},
  };
  for (const auto& k : cases) {
    EXPECT_EQ(cursor_steps(k.s), k.want) << testing::PrintToString(k.s);
    EXPECT_EQ(icu_steps(k.s), k.want) << testing::PrintToString(k.s);
  }
}

// Section 3.9, Tables 3-8 to 3-11: one U+FFFD per maximal subpart.
TEST(Utf8Cursor, MaximalSubpartsOfSection3_9) {
  struct Case {
    const char* table;
    std::string s;
    std::vector<UChar32> want;  // -1 stands for one U+FFFD
  };
  const std::vector<Case> cases = {
      {"3-8 non-shortest forms", bytes({0xC0, 0xAF, 0xE0, 0x80, 0xBF, 0xF0, 0x81, 0x82, 0x41}),
       {-1, -1, -1, -1, -1, -1, -1, -1, 0x41}},
      {"3-9 surrogates", bytes({0xED, 0xA0, 0x80, 0xED, 0xBF, 0xBF, 0xED, 0xAF, 0x41}),
       {-1, -1, -1, -1, -1, -1, -1, -1, 0x41}},
      {"3-10 other ill-formed", bytes({0xF4, 0x91, 0x92, 0x93, 0xFF, 0x41, 0x80, 0xBF, 0x42}),
       {-1, -1, -1, -1, -1, 0x41, -1, -1, 0x42}},
      {"3-11 truncated", bytes({0xE1, 0x80, 0xE2, 0xF0, 0x91, 0x92, 0xF1, 0xBF, 0x41}), {-1, -1, -1, -1, 0x41}},
  };
  for (const auto& k : cases) {
    std::vector<UChar32> got;
    for (const Step& s : cursor_steps(k.s)) got.push_back(s.c);
    EXPECT_EQ(got, k.want) << k.table;
    EXPECT_EQ(cursor_steps(k.s), icu_steps(k.s)) << k.table;
    // The substitution that repair_utf8 makes from the same steps.
    std::string repaired;
    repair_utf8(k.s, repaired);
    std::string want;
    for (UChar32 c : k.want) want += c < 0 ? std::string("\xEF\xBF\xBD") : test::utf8_of(c);
    EXPECT_EQ(repaired, want) << k.table;
  }
}

// Random bytes biased toward UTF-8's interesting values, cut at every end
// (a sequence truncated by the end of the text is one subpart too).
TEST(Utf8Cursor, RandomBytesAgreeWithIcu) {
  std::mt19937 rng(20261203);
  const uint8_t pool[] = {0x00, 0x41, 0x7F, 0x80, 0x8F, 0x90, 0x9F, 0xA0, 0xBF, 0xC0, 0xC1, 0xC2, 0xDF,
                          0xE0, 0xE1, 0xEC, 0xED, 0xEE, 0xEF, 0xF0, 0xF1, 0xF3, 0xF4, 0xF5, 0xFF};
  for (int round = 0; round < 20000; ++round) {
    std::string s;
    size_t len = rng() % 12;
    for (size_t k = 0; k < len; ++k) s += static_cast<char>(pool[rng() % sizeof pool]);
    ASSERT_EQ(cursor_steps(s), icu_steps(s)) << testing::PrintToString(s);
    // A cursor over a window [from, to) sees only that window.
    size_t from = s.empty() ? 0 : rng() % s.size(), to = from + (s.size() == from ? 0 : rng() % (s.size() - from + 1));
    std::string_view w = std::string_view(s).substr(from, to - from);
    std::vector<Step> want = icu_steps(w), got;
    Utf8Cursor u(s, from, to);
    while (!u.done()) {
      size_t at = u.pos();
      UChar32 c = u.next();
      got.push_back({c < 0 ? -1 : c, u.pos() - at});
    }
    ASSERT_EQ(got, want);
    // for_each_char hands out the same steps with their bytes.
    std::vector<Step> each;
    std::string joined;
    for_each_char(s, [&](UChar32 c, std::string_view b) {
      each.push_back({c < 0 ? -1 : c, b.size()});
      joined += b;
    });
    ASSERT_EQ(each, cursor_steps(s));
    ASSERT_EQ(joined, s);
  }
}

// The eight-byte step: how many lead bytes are ASCII, by a byte loop.
TEST(Utf8Cursor, AsciiRunCountsLeadingAsciiBytes) {
  std::mt19937 rng(7);
  for (int round = 0; round < 20000; ++round) {
    std::string s;
    size_t len = rng() % 20;
    for (size_t k = 0; k < len; ++k) s += static_cast<char>(rng() % 4 == 0 ? 0x80 + rng() % 128 : rng() % 128);
    Utf8Cursor u(s);
    size_t at = s.empty() ? 0 : rng() % s.size();
    u.seek(at);
    AsciiRun w;
    bool got = u.ascii_run(w);
    ASSERT_EQ(got, s.size() - at >= 8);
    if (!got) continue;
    int want = 0;
    while (want < 8 && static_cast<uint8_t>(s[at + static_cast<size_t>(want)]) < 0x80) ++want;
    ASSERT_EQ(w.ascii, want);
    ASSERT_EQ(u.pos(), at);  // the cursor does not move
  }
}

}  // namespace
}  // namespace sheaf
