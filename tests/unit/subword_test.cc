// Byte-pair encoding: the learner against the paper's examples and a naive
// reference, lossless round trips, the vocabulary file.
#include <gtest/gtest.h>
#include <unicode/utf8.h>
#include <xxhash.h>

#include <cmath>
#include <cstdio>
#include <map>
#include <random>
#include <set>
#include <sstream>
#include <thread>
#include <tuple>

#include "io/line_blocks.h"
#include "io/output_file.h"
#include "stages/normalize.h"
#include "subword/codec.h"
#include "subword/merge_learner.h"
#include "subword/merge_ranks.h"
#include "subword/trainer.h"
#include "subword/units.h"
#include "test_util.h"

namespace sheaf {
namespace {

// Words of a dictionary as symbol ids: one id per character, plus an
// end-of-word symbol, as in the paper.
struct ToyDict {
  std::map<std::string, uint32_t> ids;
  std::vector<std::string> names;
  uint32_t id(const std::string& s) {
    auto it = ids.find(s);
    if (it != ids.end()) return it->second;
    names.push_back(s);
    return ids[s] = static_cast<uint32_t>(names.size() - 1);
  }
  WordList words(const std::vector<std::pair<std::string, uint64_t>>& dict) {
    WordList out;
    for (const auto& [w, n] : dict) {
      std::vector<uint32_t> symbols;
      for (char c : w) symbols.push_back(id(std::string(1, c)));
      symbols.push_back(id("</w>"));
      EXPECT_TRUE(out.add(symbols, n));
    }
    return out;
  }
};

// Source: Sennrich, Haddow & Birch (2016), "Neural Machine Translation of Rare
// Words with Subword Units", Algorithm 1's dictionary. The first ten merges
// have frequencies 9, 9, 9, 7, 7, 6, 6, 6, 5, 3 whatever the tie order, and
// after them "newest</w>" is one symbol.
TEST(MergeLearner, PaperAlgorithmOneDictionary) {
  ToyDict d;
  auto words = d.words({{"low", 5}, {"lower", 2}, {"newest", 6}, {"widest", 3}});
  LearnOptions o;
  o.max_merges = 10;
  o.min_count = 1;
  o.first_new_id = 1000;
  auto merges = learn_merges(words, o);
  ASSERT_EQ(merges.size(), 10u);
  std::vector<uint64_t> counts;
  for (const auto& m : merges) counts.push_back(m.count);
  EXPECT_EQ(counts, (std::vector<uint64_t>{9, 9, 9, 7, 7, 6, 6, 6, 5, 3}));
  EXPECT_EQ(words.word(2).size(), 1u);  // newest</w>
  // Ties broken the other way round give the same counts.
  ToyDict d2;
  auto words2 = d2.words({{"low", 5}, {"lower", 2}, {"newest", 6}, {"widest", 3}});
  o.before = [](SymbolPair a, SymbolPair b) { return std::pair(a.left, a.right) > std::pair(b.left, b.right); };
  auto m2 = learn_merges(words2, o);
  std::vector<uint64_t> c2;
  for (const auto& m : m2) c2.push_back(m.count);
  EXPECT_EQ(c2, counts);
}

// Source: the same paper, Figure 1's dictionary (low, lowest, newer, wider,
// once each) and its merges r·, lo, low, er·, all of frequency 2. Several
// pairs tie at 2 there, so the figure's order is one tie order among many:
// given the figure's preference among tied pairs, the learner reproduces it
// (with smaller ids first, the fourth merge has frequency 1 instead).
TEST(MergeLearner, PaperFigureOneDictionary) {
  ToyDict d;
  auto words = d.words({{"low", 1}, {"lowest", 1}, {"newer", 1}, {"wider", 1}});
  uint32_t l = d.id("l"), o_ = d.id("o"), w = d.id("w"), e = d.id("e"), r = d.id("r"), end = d.id("</w>");
  // New ids: r· = 1000, lo = 1001, low = 1002, er· = 1003.
  std::vector<std::pair<uint32_t, uint32_t>> figure = {{r, end}, {l, o_}, {1001, w}, {e, 1000}};
  LearnOptions o;
  o.max_merges = 4;
  o.min_count = 1;
  o.first_new_id = 1000;
  auto rank = [&](SymbolPair p) {
    for (size_t i = 0; i < figure.size(); ++i)
      if (figure[i] == std::pair(p.left, p.right)) return i;
    return figure.size();
  };
  o.before = [&](SymbolPair a, SymbolPair b) {
    if (rank(a) != rank(b)) return rank(a) < rank(b);
    return std::pair(a.left, a.right) < std::pair(b.left, b.right);
  };
  auto merges = learn_merges(words, o);
  ASSERT_EQ(merges.size(), 4u);
  for (size_t i = 0; i < 4; ++i) {
    EXPECT_EQ(std::pair(merges[i].left, merges[i].right), figure[i]) << i;
    EXPECT_EQ(merges[i].count, 2u) << i;
  }
}

// A naive learner: recount every pair after every merge. Symbols below
// `mergeable` never merge (as byte tokens do not).
struct NaiveWord {
  std::vector<uint32_t> symbols;
  uint64_t count;
};
std::vector<Merge> naive(std::vector<NaiveWord>& words, size_t max_merges, uint64_t min_count, uint32_t first,
                         uint32_t mergeable) {
  std::vector<Merge> out;
  for (size_t k = 0; k < max_merges; ++k) {
    std::map<std::pair<uint32_t, uint32_t>, uint64_t> c;
    for (const auto& w : words)
      for (size_t i = 0; i + 1 < w.symbols.size(); ++i)
        if (w.symbols[i] >= mergeable && w.symbols[i + 1] >= mergeable) c[{w.symbols[i], w.symbols[i + 1]}] += w.count;
    std::pair<uint32_t, uint32_t> best{};
    uint64_t bc = 0;
    for (const auto& [p, n] : c)
      if (n > bc) {  // map order = smaller pair first among equal counts
        bc = n;
        best = p;
      }
    if (bc < min_count || bc == 0) break;
    uint32_t z = first + static_cast<uint32_t>(k);
    out.push_back({best.first, best.second, z, bc});
    for (auto& w : words) {
      std::vector<uint32_t> s;
      for (size_t i = 0; i < w.symbols.size();) {
        if (i + 1 < w.symbols.size() && w.symbols[i] == best.first && w.symbols[i + 1] == best.second) {
          s.push_back(z);
          i += 2;
        } else {
          s.push_back(w.symbols[i++]);
        }
      }
      w.symbols = s;
    }
  }
  return out;
}

// The fast learner forgets pairs below min_count and touches only the pairs
// next to each merged occurrence; the naive one recounts everything. Random
// corpora over small alphabets make long runs of equal symbols (the overlap
// case a a a), many ties and many pairs that fall below min_count.
TEST(MergeLearner, AgreesWithANaiveLearnerOnRandomCorpora) {
  std::mt19937 rng(7);
  for (int trial = 0; trial < 120; ++trial) {
    std::vector<NaiveWord> words;
    WordList list;
    uint32_t alphabet = 2 + static_cast<uint32_t>(trial % 6);
    uint32_t mergeable = trial % 3 == 2 ? 1 : 0;  // symbol 0 never merges in a third of the trials
    uint64_t min_count = 1 + static_cast<uint64_t>(trial % 4);
    int n_words = trial < 60 ? 60 : 400;
    for (int w = 0; w < n_words; ++w) {
      NaiveWord t;
      int len = 1 + static_cast<int>(rng() % 12);
      for (int i = 0; i < len; ++i) t.symbols.push_back(static_cast<uint32_t>(rng() % alphabet));
      t.count = 1 + rng() % 6;
      words.push_back(t);
      ASSERT_TRUE(list.add(t.symbols, t.count));
    }
    LearnOptions o;
    o.max_merges = 80;
    o.min_count = min_count;
    o.first_new_id = 100;
    o.first_mergeable = mergeable;
    auto want = naive(words, 80, min_count, 100, mergeable);
    auto got = learn_merges(list, o);
    ASSERT_EQ(got.size(), want.size()) << "trial " << trial;
    for (size_t i = 0; i < got.size(); ++i) {
      ASSERT_EQ(got[i].left, want[i].left) << "trial " << trial << " merge " << i;
      ASSERT_EQ(got[i].right, want[i].right) << "trial " << trial << " merge " << i;
      ASSERT_EQ(got[i].count, want[i].count) << "trial " << trial << " merge " << i;
    }
    for (size_t w = 0; w < words.size(); ++w) {
      auto s = list.word(w);
      ASSERT_EQ(std::vector<uint32_t>(s.begin(), s.end()), words[w].symbols) << "trial " << trial << " word " << w;
    }
  }
}

// Merges whose holder lists are long rewrite words on several threads and
// apply count changes in holder order: the merges, their counts and the final
// words must be those of one thread. 100,000 words over 4 symbols give holder
// lists of tens of thousands of words.
TEST(MergeLearner, ThreadsGiveTheSameMerges) {
  std::mt19937 rng(13);
  WordList one, two;
  for (int w = 0; w < 100000; ++w) {
    std::vector<uint32_t> symbols;
    int len = 2 + static_cast<int>(rng() % 11);
    for (int i = 0; i < len; ++i) symbols.push_back(static_cast<uint32_t>(rng() % 4));
    uint64_t count = 1 + rng() % 3;
    ASSERT_TRUE(one.add(symbols, count));
    ASSERT_TRUE(two.add(symbols, count));
  }
  LearnOptions o;
  o.max_merges = 300;
  o.first_new_id = 100;
  auto a = learn_merges(one, o);
  o.threads = 2;
  auto b = learn_merges(two, o);
  ASSERT_EQ(a.size(), b.size());
  ASSERT_GT(a[0].count, 40000u);  // far more holders than two blocks of 8,192 words
  for (size_t i = 0; i < a.size(); ++i) {
    ASSERT_EQ(std::tuple(a[i].left, a[i].right, a[i].count), std::tuple(b[i].left, b[i].right, b[i].count)) << i;
  }
  for (size_t w = 0; w < one.size(); ++w) {
    auto x = one.word(w), y = two.word(w);
    ASSERT_TRUE(std::equal(x.begin(), x.end(), y.begin(), y.end())) << w;
  }
}

// Words kept in 16 bits (any vocabulary of at most 65,536 tokens) learn the
// merges, counts and final words of 32 bits, on one thread and on two, with
// ids near the top of the 16-bit range; a symbol that does not fit is
// refused, and new ids never pass 65,535.
TEST(MergeLearner, SixteenBitWordsLearnWhatThirtyTwoBitWordsLearn) {
  std::mt19937 rng(29);
  for (int trial = 0; trial < 8; ++trial) {
    WordList wide;
    NarrowWordList narrow;
    const uint32_t base = trial % 2 ? 65000 : 4;  // symbol ids from here
    for (int w = 0; w < (trial < 4 ? 2000 : 40000); ++w) {
      std::vector<uint32_t> symbols;
      int len = 1 + static_cast<int>(rng() % 12);
      for (int i = 0; i < len; ++i) symbols.push_back(base + static_cast<uint32_t>(rng() % (3 + trial)));
      uint64_t count = trial == 7 ? (uint64_t{1} << 40) + rng() % 5 : 1 + rng() % 6;  // counts past 32 bits
      ASSERT_TRUE(wide.add(symbols, count));
      ASSERT_TRUE(narrow.add(symbols, count));
    }
    LearnOptions o;
    o.max_merges = 400;
    o.min_count = 1 + static_cast<uint64_t>(trial % 3);
    o.first_new_id = base + 100;
    o.threads = 1 + trial % 2;
    auto a = learn_merges(wide, o);
    auto b = learn_merges(narrow, o);
    // From 65,100, 16 bits leave room for 436 new ids: all 400 fit.
    ASSERT_EQ(a.size(), b.size()) << trial;
    for (size_t i = 0; i < a.size(); ++i)
      ASSERT_EQ(std::tuple(a[i].left, a[i].right, a[i].result, a[i].count),
                std::tuple(b[i].left, b[i].right, b[i].result, b[i].count))
          << trial << " " << i;
    for (size_t w = 0; w < wide.size(); ++w) {
      auto x = wide.word(w);
      auto y = narrow.word(w);
      ASSERT_TRUE(std::equal(x.begin(), x.end(), y.begin(), y.end())) << trial << " " << w;
      ASSERT_EQ(wide.count(wide.handle(w)), narrow.count(narrow.handle(w)));
    }
  }
  NarrowWordList n;
  EXPECT_FALSE(n.add(std::vector<uint32_t>{1, 65536}, 1));
  EXPECT_EQ(n.size(), 0u);
  // Eight 65533s: 32 bits learn three merges (65534, 65535, 65536); 16 bits
  // stop after two with a pair still open.
  const std::vector<uint32_t> eight(8, 65533);
  WordList w32;
  ASSERT_TRUE(n.add(eight, 9));
  ASSERT_TRUE(w32.add(eight, 9));
  LearnOptions o;
  o.max_merges = 100;
  o.min_count = 1;
  o.first_new_id = 65534;
  EXPECT_EQ(learn_merges(w32, o).size(), 3u);
  auto m = learn_merges(n, o);
  ASSERT_EQ(m.size(), 2u);
  EXPECT_EQ(m[1].result, 65535u);
  auto last = n.word(0);
  EXPECT_EQ(std::vector<uint32_t>(last.begin(), last.end()), (std::vector<uint32_t>{65535, 65535}));
  // A symbol at or above first_new_id: nothing is learned.
  NarrowWordList bad;
  ASSERT_TRUE(bad.add(std::vector<uint32_t>{8, 8, 6}, 3));
  ASSERT_TRUE(bad.add(std::vector<uint32_t>{5, 6}, 3));
  o.first_new_id = 5;
  EXPECT_TRUE(learn_merges(bad, o).empty());
}

TEST(Units, AreLosslessAndCarryTheirSpace) {
  std::vector<std::string> u;
  auto cut = [&](const std::string& s, bool digits) {
    u.clear();
    cut_units(s, digits, [&](std::string_view x) { u.emplace_back(x); });
    std::string joined;
    for (const auto& x : u) joined += x;
    EXPECT_EQ(joined, s);
  };
  cut("The garden, at 10:30.", false);
  EXPECT_EQ(u, (std::vector<std::string>{"The", " garden", ",", " at", " 10", ":", "30", "."}));
  cut("Room 205 now", true);
  EXPECT_EQ(u, (std::vector<std::string>{"Room", " 2", "0", "5", " now"}));
  cut("  lead and trail  ", false);
  EXPECT_EQ(u.front(), "  lead");
  EXPECT_EQ(u.back(), "  ");
  cut("\u5ead\u5712\u306f\u671d\u4e5d\u6642\u306b\u958b\u304d\u307e\u3059", false);
  EXPECT_GT(u.size(), 2u);  // cut into words, not one unit per sentence
}

// A vocabulary learned on a small invented text.
Vocabulary small_vocabulary(test::TempDir& t, size_t size = 400, bool fallback = true) {
  std::string text;
  const char* lines[] = {"The garden opens at nine.\tEl jardín abre a las nueve.",
                         "The garden closes at sunset.\tEl jardín cierra al atardecer.",
                         "Seeds are lent to gardeners.\tSe prestan semillas a los hortelanos.",
                         "Open on Sunday.\tAbierto el domingo."};
  for (int i = 0; i < 50; ++i) text += std::string(lines[i % 4]) + "\n";
  test::write_file(t / "train.tsv", text);
  TrainOptions o;
  o.size = size;
  o.specials = {"<p>", "<u>", "<b>", "<e>"};
  o.side = "shared";
  o.unknown_as_bytes = fallback;
  TrainReport r;
  auto v = train_vocabulary({t / "train.tsv"}, {0, 1}, o, &r);
  EXPECT_TRUE(v.ok()) << (v.ok() ? "" : v.error().describe());
  return v.ok() ? std::move(v.value()) : Vocabulary();
}

TEST(Codec, RoundTripsAnyUnicodeIncludingUnseenScripts) {
  test::TempDir t;
  Vocabulary v = small_vocabulary(t);
  Encoder enc(v);
  std::mt19937 rng(11);
  for (int i = 0; i < 2000; ++i) {
    std::string s;
    int n = 1 + static_cast<int>(rng() % 20);
    for (int k = 0; k < n; ++k) {
      UChar32 c;
      switch (rng() % 4) {
        case 0:
          c = static_cast<UChar32>(0x20 + rng() % 0x5F);
          break;  // ASCII
        case 1:
          c = static_cast<UChar32>(0x400 + rng() % 0x100);
          break;  // Cyrillic
        case 2:
          c = static_cast<UChar32>(0x4E00 + rng() % 0x5000);
          break;  // Han
        default:
          c = static_cast<UChar32>(rng() % 0x110000);
          break;  // anything
      }
      if (c >= 0xD800 && c <= 0xDFFF) c = 0x20;
      char buf[4];
      int32_t m = 0;
      U8_APPEND_UNSAFE(buf, m, c);
      s.append(buf, static_cast<size_t>(m));
    }
    auto ids = enc.encode(s);
    ASSERT_EQ(decode(v, ids), s);
    for (uint32_t id : ids) ASSERT_NE(id, v.special(kUnk));
  }
}

TEST(Codec, RoundTripsNormalizationTestStrings) {
  test::TempDir t;
  Vocabulary v = small_vocabulary(t);
  Encoder enc(v);
  FILE* f = ::popen("bzcat /usr/share/unicode/NormalizationTest.txt.bz2", "r");
  ASSERT_NE(f, nullptr);
  TextNormalizer norm{NormalizeOptions{}};
  char buf[4096];
  size_t n = 0;
  while (std::fgets(buf, sizeof buf, f)) {
    std::string line(buf);
    if (line.empty() || line[0] == '#' || line[0] == '@') continue;
    std::istringstream in(line.substr(0, line.find(';')));
    std::string h, s;
    while (in >> h) {
      char b[4];
      int32_t m = 0;
      U8_APPEND_UNSAFE(b, m, static_cast<UChar32>(std::stoul(h, nullptr, 16)));
      s.append(b, static_cast<size_t>(m));
    }
    std::string out;
    if (norm.apply(s, 0, out, nullptr) == TextNormalizer::Outcome::kRewritten) s = out;
    ASSERT_EQ(decode(v, enc.encode(s)), s) << line;
    ++n;
  }
  ::pclose(f);
  EXPECT_GT(n, 19000u);
}

TEST(Codec, MergesApplyInOrderAndSmallerSizesArePrefixes) {
  test::TempDir t;
  Vocabulary v = small_vocabulary(t);
  ASSERT_GT(v.merges(), 20u);
  Encoder full(v), none(v, 0), some(v, 10);
  std::string s = "The garden opens at nine.";
  EXPECT_LT(full.encode(s).size(), some.encode(s).size());
  EXPECT_LT(some.encode(s).size(), none.encode(s).size());
  EXPECT_EQ(none.encode(s).size(), s.size());  // one token per character
  EXPECT_EQ(some.effective_size(), v.first_merge() + 10);
  for (uint32_t id : some.encode(s)) EXPECT_LT(id, v.first_merge() + 10);
}

// A naive encoder: for each unit, find the lowest-rank pair by scanning the
// whole sequence against a std::map, merge its occurrences left to right,
// repeat. The fast one keeps ranks beside the symbols and caches units (hits,
// misses, units too long to cache): the ids must be the same.
std::vector<uint32_t> naive_encode(const Vocabulary& v, size_t merges, const std::string& text) {
  std::map<std::pair<uint32_t, uint32_t>, uint32_t> rank;
  for (size_t r = 0; r < merges; ++r) {
    const Token& t = v.token(v.first_merge() + static_cast<uint32_t>(r));
    rank.emplace(std::pair(t.left, t.right), static_cast<uint32_t>(r));
  }
  std::vector<uint32_t> out;
  cut_units(text, v.info().single_digits, [&](std::string_view u) {
    std::vector<uint32_t> s;
    v.initial_symbols(u, s);
    for (;;) {
      uint32_t best = UINT32_MAX;
      for (size_t k = 0; k + 1 < s.size(); ++k) {
        auto it = rank.find({s[k], s[k + 1]});
        if (it != rank.end()) best = std::min(best, it->second);
      }
      if (best == UINT32_MAX) break;
      const Token& t = v.token(v.first_merge() + best);
      std::vector<uint32_t> next;
      for (size_t k = 0; k < s.size();) {
        if (k + 1 < s.size() && s[k] == t.left && s[k + 1] == t.right) {
          next.push_back(v.first_merge() + best);
          k += 2;
        } else {
          next.push_back(s[k++]);
        }
      }
      s = next;
    }
    out.insert(out.end(), s.begin(), s.end());
  });
  return out;
}

TEST(Codec, AgreesWithANaiveEncoder) {
  test::TempDir t;
  Vocabulary v = small_vocabulary(t, 600);
  const std::vector<std::string> words = {"garden",
                                          "gardeners",
                                          "jard\u00edn",
                                          "nine",
                                          "nueve",
                                          "sunset",
                                          "semillas",
                                          "hortelanos",
                                          "abierto",
                                          "domingo",
                                          "gardengardengardengarden",
                                          "seedsseedsseedsseedsseeds",
                                          "aaaa",
                                          "eee",
                                          "\u0416\u0416",
                                          "10:30",
                                          "d\u2019"};
  std::mt19937 rng(5);
  for (size_t merges : {size_t{0}, size_t{7}, size_t{60}, v.merges()}) {
    Encoder enc(v, merges);
    for (int i = 0; i < 300; ++i) {
      std::string s;
      int n = 1 + static_cast<int>(rng() % 10);
      for (int k = 0; k < n; ++k) s += (k ? " " : "") + words[rng() % words.size()];
      ASSERT_EQ(enc.encode(s), naive_encode(v, merges, s)) << merges << " merges: " << s;
    }
  }
}

// Vocabularies of 2^21 tokens and more keep merge ranks in a wide map, smaller
// ones in packed 64-bit slots: both must give every merge its first rank and
// nothing else a rank.
TEST(MergeRanks, PackedAndWideTablesAgree) {
  Vocabulary v =
      Vocabulary::build({"p", "u", "b", "e"}, {0, 1, 2, 3}, {"a", "b", "c"}, VocabularyInfo{"shared", 1, false, true});
  std::mt19937 rng(3);
  uint32_t a = v.first_char(), b = a + 1, c = a + 2;
  v.add_merge(a, b);
  v.add_merge(a, b);  // repeated: keeps rank 0
  while (v.size() < (size_t{1} << 21) + 10) {
    uint32_t hi = static_cast<uint32_t>(v.size());
    // A character on the left keeps token bytes short (about ln n of them).
    v.add_merge(a + static_cast<uint32_t>(rng() % 3), v.first_char() + rng() % (hi - v.first_char()));
  }
  MergeRanks wide(v, v.merges()), packed(v, 40000);
  EXPECT_EQ(wide.find(a, b), 0u);
  EXPECT_EQ(packed.find(a, b), 0u);
  EXPECT_EQ(packed.find(c, c), UINT32_MAX);
  for (int i = 0; i < 20000; ++i) {
    uint32_t r = static_cast<uint32_t>(rng() % v.merges());
    const Token& t = v.token(v.first_merge() + r);
    uint32_t w = wide.find(t.left, t.right);
    ASSERT_LE(w, r);  // its rank, or the earlier rank of the same pair
    const Token& first = v.token(v.first_merge() + w);
    ASSERT_EQ(std::pair(first.left, first.right), std::pair(t.left, t.right));
    if (r < 40000) {
      ASSERT_EQ(packed.find(t.left, t.right), w);
    }
    uint32_t x = v.first_char() + static_cast<uint32_t>(rng() % 3), y = static_cast<uint32_t>(v.size() + rng() % 100);
    ASSERT_EQ(wide.find(x, y), UINT32_MAX);
  }
}

TEST(Codec, WithoutByteFallbackRareCharactersAreUnknown) {
  test::TempDir t;
  Vocabulary v = small_vocabulary(t, 400, false);
  Encoder enc(v);
  EncodeStats st;
  std::vector<uint32_t> ids;
  enc.encode("garden \u0416", ids, &st);
  EXPECT_EQ(ids.back(), v.special(kUnk));
  EXPECT_EQ(st.unknown, 1u);
  // The unknown token decodes to U+FFFD (the Unicode Standard's replacement
  // character), not to nothing: a reader sees that text was lost.
  EXPECT_EQ(decode(v, ids), "garden \uFFFD");
}

TEST(Trainer, SizeIsExactAndImpossibleSizesAreErrors) {
  test::TempDir t;
  Vocabulary v = small_vocabulary(t, 300);
  EXPECT_EQ(v.size(), 300u);
  TrainOptions o;
  o.size = 262;
  o.specials = {"a", "b", "c", "d"};
  auto bad = train_vocabulary({t / "train.tsv"}, {0, 1}, o, nullptr);
  ASSERT_FALSE(bad.ok());
  EXPECT_NE(bad.error().message().find("raise size to at least"), std::string::npos);
}

TEST(Trainer, SameVocabularyAtAnyThreadCount) {
  test::TempDir t;
  std::string text;
  std::mt19937 rng(3);
  for (int i = 0; i < 20000; ++i)
    text += "w" + std::to_string(rng() % 500) + " x" + std::to_string(rng() % 90) + "\ty" +
            std::to_string(rng() % 300) + "\n";
  test::write_file(t / "train.tsv", text);
  TrainOptions o;
  o.size = 900;
  o.specials = {"a", "b", "c", "d"};
  o.threads = 1;
  auto one = train_vocabulary({t / "train.tsv"}, {0, 1}, o, nullptr);
  o.threads = 4;
  auto four = train_vocabulary({t / "train.tsv"}, {0, 1}, o, nullptr);
  ASSERT_TRUE(one.ok() && four.ok());
  EXPECT_EQ(one->serialize(), four->serialize());
}

// The learner ends with every training unit encoded by all its merges; the
// shard step hands these to its encoder instead of encoding train again, so
// they must be exactly what the encoder computes.
TEST(Trainer, LearnedUnitsAreWhatTheEncoderGives) {
  test::TempDir t;
  std::string text;
  std::mt19937 rng(11);
  for (int i = 0; i < 5000; ++i)
    text += "w" + std::to_string(rng() % 700) + "ab x" + std::to_string(rng() % 90) + "\u00e9" +
            (i % 97 == 0 ? " z\u00f8" : "") + "\tcc" + std::to_string(rng() % 300) + "\n";  // rare: outside the alphabet
  test::write_file(t / "train.tsv", text);
  // Modes: plain; single digits; the unknown token instead of byte tokens;
  // a vocabulary over 65,536 tokens (32-bit words; learning stops early).
  for (int mode = 0; mode < 4; ++mode) {
    bool single_digits = mode == 1, bytes = mode != 2;
    TrainOptions o;
    o.size = mode == 3 ? 70000 : 700;
    o.specials = {"a", "b", "c", "d"};
    o.threads = 2;
    o.single_digits = single_digits;
    o.unknown_as_bytes = bytes;
    o.alphabet_coverage = 0.99;  // some characters go through byte tokens (or the unknown token)
    TrainReport r;
    LearnedUnits units;
    auto v = train_vocabulary({t / "train.tsv"}, {0, 1}, o, &r, &units);
    ASSERT_TRUE(v.ok());
    ASSERT_EQ(units.size(), r.word_types);
    Encoder fresh(*v);
    // A unit's text is its tokens' bytes, unless it holds the unknown token.
    std::string unit;
    size_t lost = 0;
    std::set<std::string> rebuilt;
    for (size_t k = 0; k < units.size(); ++k) {
      auto ids = units.ids_of(k);
      if (!units.text_of(k, *v, unit)) {
        ASSERT_FALSE(bytes) << k;
        ASSERT_NE(std::find(ids.begin(), ids.end(), v->special(kUnk)), ids.end());
        ++lost;
        continue;
      }
      ASSERT_EQ(fresh.encode(unit), std::vector<uint32_t>(ids.begin(), ids.end())) << unit;
      rebuilt.insert(unit);
    }
    EXPECT_EQ(lost > 0, !bytes);
    // The rebuilt texts are the distinct units of the training text: all of
    // them with byte tokens, those without a character outside the alphabet
    // otherwise.
    std::set<std::string> distinct;
    for_each_line(text, [&](std::string_view l) {
      for (std::string_view side : tsv_sides(l))
        cut_units(side, single_digits, [&](std::string_view x) { distinct.emplace(x); });
    });
    EXPECT_EQ(rebuilt.size() + lost, distinct.size());
    for (const std::string& x : rebuilt) ASSERT_TRUE(distinct.count(x)) << x;
    // An encoder that starts from them, on four threads, encodes every line
    // as a fresh one does. Plain threads, not oneTBB's parallel_for, so that
    // ThreadSanitizer sees every edge (docs/reliability.md).
    Encoder seeded(*v, SIZE_MAX, text.size());
    for (size_t k = 0; k < units.size(); ++k)
      if (units.text_of(k, *v, unit)) seeded.remember(unit, units.ids_of(k));
    std::vector<std::string_view> lines;
    for_each_line(text, [&](std::string_view l) { lines.push_back(l); });
    std::vector<std::vector<uint32_t>> got(lines.size());
    std::vector<std::thread> threads;
    for (size_t k = 0; k < 4; ++k)
      threads.emplace_back([&, k] {
        for (size_t i = k; i < lines.size(); i += 4) got[i] = seeded.encode(lines[i]);
      });
    for (auto& th : threads) th.join();
    for (size_t i = 0; i < lines.size(); ++i) ASSERT_EQ(got[i], fresh.encode(lines[i])) << lines[i];
  }
}

TEST(VocabularyFile, RoundTripsAndDetectsDamage) {
  test::TempDir t;
  Vocabulary v = small_vocabulary(t);
  std::string text = v.serialize();
  auto back = Vocabulary::parse(text, "v.txt");
  ASSERT_TRUE(back.ok()) << back.error().describe();
  EXPECT_EQ(back->serialize(), text);
  EXPECT_EQ(back->checksum(), v.checksum());
  // Every single flipped byte is detected, and so is any truncation.
  for (size_t i = 0; i < text.size(); i += 7) {
    std::string bad = text;
    bad[i] ^= 0x01;
    EXPECT_FALSE(Vocabulary::parse(bad, "v.txt").ok()) << "byte " << i;
  }
  for (size_t n : {size_t{0}, size_t{10}, text.size() / 2, text.size() - 2})
    EXPECT_FALSE(Vocabulary::parse(text.substr(0, n), "v.txt").ok()) << n;
}

// docs/vocabulary-format.md: single-digits and unknown-as-bytes are required,
// each yes or no. A header with another spelling (with its checksum made
// anew, so only the header is wrong) is refused, not read with a default.
TEST(VocabularyFile, SwitchesMustBeWrittenAsYesOrNo) {
  test::TempDir t;
  std::string text = small_vocabulary(t).serialize();
  auto reseal = [](std::string body) {
    body = body.substr(0, body.rfind("checksum\t"));
    return body + "checksum\t" + hex64(XXH3_64bits(body.data(), body.size())) + "\n";
  };
  ASSERT_TRUE(Vocabulary::parse(reseal(text), "v.txt").ok());
  for (const auto& [from, to] : std::vector<std::pair<std::string, std::string>>{
           {"single-digits\tno", "digits-apart\tyes"},
           {"unknown-as-bytes\tyes", "unknown-as-bytes\tmaybe"},
           {"unknown-as-bytes\tyes\n", ""}}) {
    std::string bad = text;
    size_t at = bad.find(from);
    ASSERT_NE(at, std::string::npos) << from;
    bad.replace(at, from.size(), to);
    EXPECT_FALSE(Vocabulary::parse(reseal(bad), "v.txt").ok()) << to;
  }
}

TEST(VocabularyFile, EscapesInvisibleBytes) {
  EXPECT_EQ(escape_token(" the"), "\\sthe");
  EXPECT_EQ(escape_token("a\\b\tc"), "a\\\\b\\tc");
  EXPECT_EQ(escape_token("\xE2\x80\x8B"), "\\u{200B}");
  EXPECT_EQ(escape_token("\xFF"), "\\xFF");
  EXPECT_EQ(escape_token("\u00f1"), "\u00f1");
  for (std::string s : {" the", "a\\b\tc", "\xE2\x80\x8B", "\xFF", "\u00f1", "\x01\x7F"}) {
    auto u = unescape_token(escape_token(s));
    ASSERT_TRUE(u.ok());
    EXPECT_EQ(*u, s);
  }
  EXPECT_FALSE(unescape_token("\\q").ok());
  EXPECT_FALSE(unescape_token("\\x4").ok());
}

}  // namespace
}  // namespace sheaf

namespace sheaf {
namespace {

// BPE-dropout (Provilkov, Emelianenko & Voita 2020, Algorithm 1): with p = 0
// it is the deterministic encoding; with p = 1 no merge applies.
TEST(Dropout, ZeroIsDeterministicAndOneMergesNothing) {
  test::TempDir t;
  Vocabulary v = small_vocabulary(t, 600);
  Encoder enc(v);
  const char* texts[] = {"The garden opens at nine.", "El jardín cierra al atardecer.", "gardengardengarden aaaa",
                         "Seeds are lent to gardeners on Sunday."};
  for (const char* s : texts) {
    std::vector<uint32_t> d, none, initial;
    enc.encode_dropout(s, 0.0, 42, d);
    EXPECT_EQ(d, enc.encode(s)) << s;
    enc.encode_dropout(s, 1.0, 42, none);
    v.initial_symbols(s, initial);
    EXPECT_EQ(none, initial) << s;
    for (uint32_t id : none) EXPECT_LT(id, v.first_merge());
    std::vector<uint32_t> a, b;
    enc.encode_dropout(s, 0.3, 7, a);
    enc.encode_dropout(s, 0.3, 7, b);
    EXPECT_EQ(a, b) << s;  // reproducible
    EXPECT_EQ(decode(v, a), s);
  }
}

// Each applicable merge is left out with probability p: for the unit "abc"
// with merges (a, b) then (ab, c), the outcomes [a b c], [ab c], [abc] have
// probabilities p, (1 - p) p and (1 - p)^2. Counts over n seeds must lie
// within 5 standard deviations of the binomial mean (a false alarm has
// probability below 1e-6 per check; the seeds are fixed, so the test is
// deterministic).
TEST(Dropout, EachMergeIsSkippedWithProbabilityP) {
  Vocabulary v =
      Vocabulary::build({"p", "u", "b", "e"}, {0, 1, 2, 3}, {"a", "b", "c"}, VocabularyInfo{"shared", 1, false, true});
  uint32_t a = static_cast<uint32_t>(v.char_id("a")), b = a + 1, c = a + 2;
  uint32_t ab = v.add_merge(a, b);
  uint32_t abc = v.add_merge(ab, c);
  Encoder enc(v);
  ASSERT_EQ(enc.encode("abc"), std::vector<uint32_t>{abc});
  const int n = 20000;
  for (double p : {0.1, 0.25, 0.5, 0.9}) {
    int none = 0, one = 0, both = 0;
    for (int seed = 0; seed < n; ++seed) {
      std::vector<uint32_t> ids;
      enc.encode_dropout("abc", p, static_cast<uint64_t>(seed), ids);
      if (ids == std::vector<uint32_t>{a, b, c})
        ++none;
      else if (ids == std::vector<uint32_t>{ab, c})
        ++one;
      else if (ids == std::vector<uint32_t>{abc})
        ++both;
      else
        ADD_FAILURE() << "unexpected encoding";
    }
    auto within = [&](int count, double q) {
      double mean = n * q, sd = std::sqrt(n * q * (1 - q));
      return std::abs(count - mean) <= 5 * sd;
    };
    EXPECT_TRUE(within(none, p)) << p << ": " << none;
    EXPECT_TRUE(within(one, (1 - p) * p)) << p << ": " << one;
    EXPECT_TRUE(within(both, (1 - p) * (1 - p))) << p << ": " << both;
  }
}

}  // namespace
}  // namespace sheaf

namespace sheaf {
namespace {

// User-defined tokens: written as format 2 with their kind, read back the
// same; a vocabulary without them is still written as format 1.
TEST(VocabularyFile, UserTokensRoundTripAndFormatOneStays) {
  Vocabulary v =
      Vocabulary::build({"p", "u", "b", "e"}, {0, 1, 2, 3}, {"a", "b", "c"}, VocabularyInfo{"shared", 1, false, true});
  uint32_t a = static_cast<uint32_t>(v.char_id("a"));
  v.add_merge(a, a + 1);
  EXPECT_EQ(v.serialize().rfind("sheaf-vocabulary\t1\n", 0), 0u);
  uint32_t tag = v.add_user("<2de>");
  v.add_user("a\tb");
  EXPECT_EQ(tag, v.size() - 2);
  EXPECT_EQ(v.merges(), 1u);
  std::string text = v.serialize();
  EXPECT_EQ(text.rfind("sheaf-vocabulary\t2\n", 0), 0u);
  EXPECT_NE(text.find("user-tokens\t2\n"), std::string::npos);
  EXPECT_NE(text.find("\tuser\ta\\tb\n"), std::string::npos);
  auto back = Vocabulary::parse(text, "v");
  ASSERT_TRUE(back.ok()) << back.error().describe();
  EXPECT_EQ(back->serialize(), text);
  EXPECT_EQ(back->user_id("<2de>"), static_cast<int64_t>(tag));
  Encoder enc(*back);
  EXPECT_EQ(enc.encode("ab<2de>ab"), (std::vector<uint32_t>{back->first_merge(), tag, back->first_merge()}));
  EXPECT_EQ(decode(*back, enc.encode("c<2de>a\tb")), "c<2de>a\tb");
}

}  // namespace
}  // namespace sheaf
