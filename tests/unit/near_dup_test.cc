// The near-duplicate stage: the share of pairs it finds follows the banding
// curve 1 - (1 - s^r)^b (Leskovec, Rajaraman & Ullman, "Mining of Massive
// Datasets", ch. 3.4.2) on sets of known Jaccard similarity s; exact
// duplicates are always found; the reason names the kept line; the outputs
// are the same at any thread count.
#include <gtest/gtest.h>

#include <cmath>
#include <random>

#include "stage_util.h"
#include "stages/near_dup.h"
#include "test_util.h"

namespace sheaf {
namespace {

// Draws two sets of 64-bit shingle hashes whose Jaccard similarity is
// exactly shared / (shared + 2 * own), and says whether they share a band.
bool share_a_band(const NearDupSketch& sk, std::mt19937_64& rng, size_t shared, size_t own) {
  std::vector<uint64_t> a, b;
  for (size_t i = 0; i < shared; ++i) {
    uint64_t h = rng();
    a.push_back(h);
    b.push_back(h);
  }
  for (size_t i = 0; i < own; ++i) a.push_back(rng());
  for (size_t i = 0; i < own; ++i) b.push_back(rng());
  std::shuffle(b.begin(), b.end(), rng);
  auto sa = sk.empty(), sb = sk.empty();
  sk.add_hashes(a.data(), a.size(), sa);
  sk.add_hashes(b.data(), b.size(), sb);
  size_t bands = static_cast<size_t>(sk.options().bands);
  std::vector<uint64_t> ka(bands), kb(bands);
  sk.band_keys(sa, ka.data());
  sk.band_keys(sb, kb.data());
  for (size_t i = 0; i < bands; ++i)
    if (ka[i] == kb[i]) return true;
  return false;
}

double banding_curve(double s, int rows, int bands) { return 1.0 - std::pow(1.0 - std::pow(s, rows), bands); }

TEST(NearDup, DetectedShareFollowsTheBandingCurve) {
  NearDupSketch sk{NearDupOptions{}};
  std::mt19937_64 rng(20261202);
  const int trials = 3000;
  // Union of 200 shingles; s = shared / 200.
  for (size_t shared : {40u, 100u, 140u, 156u, 170u, 180u, 190u}) {
    size_t own = (200 - shared) / 2;
    double s = static_cast<double>(shared) / 200.0;
    double p = banding_curve(s, 11, 15);
    int hits = 0;
    for (int t = 0; t < trials; ++t) hits += share_a_band(sk, rng, shared, own);
    // Binomial bound: within 4 standard deviations of trials x p (plus one
    // for the discreteness at p near 0 or 1).
    double sd = std::sqrt(trials * p * (1 - p));
    EXPECT_NEAR(hits, trials * p, 4 * sd + 1) << "s = " << s << ", expected share " << p;
    if (s >= 0.9) {
      EXPECT_GE(hits, 0.99 * trials) << "recall at s = " << s;
    }
    if (s <= 0.5) {
      EXPECT_LE(hits, 0.01 * trials) << "false positives at s = " << s;
    }
  }
}

TEST(NearDup, OtherBandsAndRowsFollowTheirCurve) {
  NearDupOptions o;
  o.bands = 4;
  o.rows = 3;
  NearDupSketch sk{o};
  std::mt19937_64 rng(7);
  const int trials = 2000;
  for (size_t shared : {60u, 120u, 160u}) {
    size_t own = (200 - shared) / 2;
    double p = banding_curve(static_cast<double>(shared) / 200.0, 3, 4);
    int hits = 0;
    for (int t = 0; t < trials; ++t) hits += share_a_band(sk, rng, shared, own);
    EXPECT_NEAR(hits, trials * p, 4 * std::sqrt(trials * p * (1 - p)) + 1);
  }
}

TEST(NearDup, CanonicalForm) {
  std::string c;
  NearDupSketch::canonical("  Hello, WORLD!! 42 times… Ünïcode—Straße ", c);
  EXPECT_EQ(c, "hello world 42 times ünïcode straße");
  NearDupSketch::canonical("?!", c);
  EXPECT_EQ(c, "");
}

// add_text() (canonical form and word bounds in one pass, what the stage
// runs) gives the signature of canonical() then add().
TEST(NearDup, OnePassGivesTheSameSignature) {
  for (ShingleUnit unit : {ShingleUnit::kWords, ShingleUnit::kChars}) {
    for (int size : {1, 2, 3}) {
      NearDupOptions o;
      o.unit = unit;
      o.shingle_size = size;
      NearDupSketch sk{o};
      for (const char* text : {"", "?!", "a", "One", "  Hello, WORLD!! 42 times… Ünïcode—Straße ",
                               "¿Dónde está el faro? — Ñandú, ÉCLAIR; ＡＢＣ ⅷ", "x y", " x  y ", "日本語のテキスト",
                               "Ǆemal İstanbul ΣΊΣΥΦΟΣ", "tab\tand\nnewline…end"}) {
        std::string c;
        NearDupSketch::canonical(text, c);
        auto a = sk.empty(), b = sk.empty();
        size_t na = sk.add(c, 5, a);
        size_t nb = sk.add_text(text, 5, b);
        EXPECT_EQ(na, nb) << text;
        EXPECT_EQ(a, b) << text;
      }
    }
  }
}

std::string sentence(std::mt19937_64& rng, int words) {
  static const char* vocab[] = {"tide",  "harbour", "lantern", "keeper", "rope",   "gull",  "north", "storm",
                                "quay",  "boat",    "net",     "salt",   "bell",   "fog",   "pier",  "sail",
                                "oar",   "reef",    "crab",    "shell",  "wave",   "moon",  "star",  "chart",
                                "mast",  "deck",    "cabin",   "hull",   "anchor", "cove",  "bay",   "cliff"};
  std::string s;
  for (int i = 0; i < words; ++i) {
    if (i) s += ' ';
    s += vocab[rng() % 32];
    s += std::to_string(rng() % 50);  // many distinct words
  }
  return s;
}

TEST(NearDup, ExactDuplicatesAreAlwaysFound) {
  test::StageHarness h("kind = \"near-dup\"");
  ASSERT_TRUE(h.ok()) << h.error();
  std::mt19937_64 rng(3);
  std::vector<std::pair<std::string, std::string>> pairs;
  const int n = 1500;
  for (int i = 0; i < n; ++i) pairs.emplace_back(sentence(rng, 1 + i % 20), sentence(rng, 1 + i % 17));
  // The same pairs again, with other case, punctuation and spacing.
  for (int i = 0; i < n; ++i) {
    std::string s = pairs[static_cast<size_t>(i)].first, t = pairs[static_cast<size_t>(i)].second;
    for (char& ch : s) ch = static_cast<char>(std::toupper(static_cast<unsigned char>(ch)));
    pairs.emplace_back("  " + s + "!", t + " .");
  }
  auto r = h.run(pairs);
  for (int i = 0; i < n; ++i) EXPECT_EQ(r.reasons[static_cast<size_t>(i)], "") << i;
  for (int i = 0; i < n; ++i)
    EXPECT_EQ(r.reasons[static_cast<size_t>(n + i)], "near-duplicate:" + std::to_string(i + 1)) << i;
}

// Enough kept pairs that every band's table doubles twice (from 4,096
// slots, at 3/4 load): the entries moved by a doubling (their home slot
// recovered from the distance stored in the slot) are still found, with
// the right kept line, and distinct pairs are still kept.
TEST(NearDup, KeptPairsAreFoundAfterTheTablesGrow) {
  test::StageHarness h("kind = \"near-dup\"");
  ASSERT_TRUE(h.ok()) << h.error();
  std::mt19937_64 rng(11);
  std::vector<std::pair<std::string, std::string>> pairs;
  const int n = 7000;
  for (int i = 0; i < n; ++i) pairs.emplace_back(sentence(rng, 8 + i % 9), sentence(rng, 8 + i % 7));
  // Copies in reverse order, with other case and punctuation.
  for (int i = n - 1; i >= 0; --i) {
    std::string s = pairs[static_cast<size_t>(i)].first;
    s[0] = static_cast<char>(std::toupper(static_cast<unsigned char>(s[0])));
    pairs.emplace_back(s + ".", pairs[static_cast<size_t>(i)].second + "!");
  }
  auto r = h.run(pairs);
  int kept = 0;
  for (int i = 0; i < n; ++i) kept += r.reasons[static_cast<size_t>(i)].empty();
  EXPECT_EQ(kept, n);
  for (int j = 0; j < n; ++j)
    EXPECT_EQ(r.reasons[static_cast<size_t>(n + j)], "near-duplicate:" + std::to_string(n - j)) << j;
}

TEST(NearDup, OneWordChangedInALongPairIsFoundAndDifferentPairsAreKept) {
  test::StageHarness h("kind = \"near-dup\"");
  ASSERT_TRUE(h.ok()) << h.error();
  auto r = h.run({
      {"The keeper lit the lantern at the north end of the harbour before the storm came in",
       "El guardián encendió el farol en el extremo norte del puerto antes de que llegara la tormenta"},
      {"The keeper lit the lantern at the south end of the harbour before the storm came in",
       "El guardián encendió el farol en el extremo norte del puerto antes de que llegara la tormenta"},
      {"Gulls followed the boat back to the quay", "Las gaviotas siguieron al barco hasta el muelle"},
      {"Nets were mended on the pier every morning", "Las redes se remendaban en el muelle cada mañana"},
  });
  EXPECT_EQ(r.reasons[0], "");
  EXPECT_EQ(r.reasons[1], "near-duplicate:1");
  EXPECT_EQ(r.reasons[2], "");
  EXPECT_EQ(r.reasons[3], "");
}

TEST(NearDup, ScopeSourceComparesTheSourceOnly) {
  test::StageHarness h("kind = \"near-dup\"\nscope = \"source\"");
  ASSERT_TRUE(h.ok()) << h.error();
  auto r = h.run({{"Fog rolled over the cliff", "La niebla cubrió el acantilado"},
                  {"Fog rolled over the cliff.", "Otra traducción distinta por completo"},
                  {"Nothing but symbols: ???", "x"},
                  {"???", "y"}});
  EXPECT_EQ(r.reasons[1], "near-duplicate:1");
  EXPECT_EQ(r.reasons[3], "");  // no letter or digit: no shingle, left alone
}

TEST(NearDup, CharacterShingles) {
  test::StageHarness h("kind = \"near-dup\"\nshingle = \"chars\"\nshingle_size = 5");
  ASSERT_TRUE(h.ok()) << h.error();
  auto r = h.run({{"The anchor chain rattled down into the cove at dawn", "La cadena del ancla bajó a la cala al alba"},
                  {"The anchor chain rattled down into the cove at dawn!", "La cadena del ancla bajó a la cala al alba"},
                  {"Crabs hid under every shell on the reef", "Los cangrejos se escondían bajo cada concha"}});
  EXPECT_EQ(r.reasons[1], "near-duplicate:1");
  EXPECT_EQ(r.reasons[2], "");
}

TEST(NearDup, BadKeysAreRejected) {
  test::StageHarness a("kind = \"near-dup\"\nbands = 0");
  EXPECT_FALSE(a.ok());
  test::StageHarness b("kind = \"near-dup\"\nshingle = \"lines\"");
  EXPECT_FALSE(b.ok());
}

}  // namespace
}  // namespace sheaf
