// The filter stages: every option and every reason code.
#include <gtest/gtest.h>
#include <re2/re2.h>
#include <unicode/utf8.h>

#include <random>
#include <unordered_map>

#include "stage_util.h"
#include "stages/own_text.h"
#include "stages/copy.h"
#include "stages/dedup.h"
#include "stages/dedup_table.h"
#include "stages/length.h"
#include "test_util.h"

namespace sheaf {
namespace {

using Reasons = std::vector<std::string>;

TEST(Length, EmptySidesHaveTheirOwnReasons) {
  test::StageHarness h("kind = \"length\"");
  ASSERT_TRUE(h.ok()) << h.error();
  EXPECT_EQ(h.run({{"", "x"}, {"x", ""}, {"", ""}, {"a", "b"}}).reasons,
            (Reasons{"empty:source", "empty:target", "empty:both", ""}));
}

TEST(Length, MinAndMaxPerSideInEachUnit) {
  test::StageHarness words("kind = \"length\"\nsource_min = 2\nsource_max = 3\ntarget_max = 4\nmax_ratio = 0");
  EXPECT_EQ(
      words.run({{"one", "uno dos"}, {"one two", "a b"}, {"one two three four", "a"}, {"a b", "1 2 3 4 5"}}).reasons,
      (Reasons{"too-short:source", "", "too-long:source", "too-long:target"}));
  // Code points, not bytes: "ñandú" is 5 chars, 7 bytes.
  test::StageHarness chars("kind = \"length\"\nunit = \"chars\"\nsource_max = 5\nmax_ratio = 0");
  test::StageHarness bytes("kind = \"length\"\nunit = \"bytes\"\nsource_max = 5\nmax_ratio = 0");
  EXPECT_EQ(chars.reason("\u00f1and\u00fa", "x"), "");
  EXPECT_EQ(bytes.reason("\u00f1and\u00fa", "x"), "too-long:source");
  // Words by UAX #29 in a script without spaces.
  test::StageHarness ja("kind = \"length\"\ntarget_max = 2\nmax_ratio = 0", "en", "ja");
  EXPECT_EQ(
      ja.reason("The garden opens at nine.", "\u5ead\u5712\u306f\u671d\u4e5d\u6642\u306b\u958b\u304d\u307e\u3059"),
      "too-long:target");
}

TEST(Length, RatioWithSlack) {
  EXPECT_DOUBLE_EQ(length_ratio(2, 10, 4), 14.0 / 6.0);
  EXPECT_DOUBLE_EQ(length_ratio(10, 2, 0), 5.0);
  test::StageHarness h("kind = \"length\"\nmax_ratio = 2.0\nratio_slack = 1");
  // 1 word vs 3 words: (3+1)/(1+1) = 2, kept; vs 4 words: 2.5, dropped.
  EXPECT_EQ(h.run({{"one", "a b c"}, {"one", "a b c d"}}).reasons, (Reasons{"", "ratio"}));
  test::StageHarness off("kind = \"length\"\nmax_ratio = 0");
  EXPECT_EQ(off.reason("one", "a b c d e f g h i j"), "");
}

TEST(Length, LongWordCatchesJunk) {
  test::StageHarness h("kind = \"length\"\nmax_word_chars = 20\nmax_ratio = 0");
  EXPECT_EQ(h.reason("see aGVsbG8gd29ybGQgaGVsbG8gd29ybGQ+/x=", "ver"), "long-word:source");
  EXPECT_EQ(h.reason("fine words", "palabras normales"), "");
  test::StageHarness off("kind = \"length\"\nmax_word_chars = 0\nmax_ratio = 0");
  EXPECT_EQ(off.reason("aaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaa", "b"), "");
}

TEST(Length, MinAboveMaxIsAPipelineError) {
  test::StageHarness h("kind = \"length\"\nsource_min = 9\nsource_max = 3");
  EXPECT_FALSE(h.ok());
  EXPECT_NE(h.error().find("source_min is above source_max"), std::string::npos) << h.error();
}

// Acronyms and metavariables in capitals (RTS, CTS, FILE) stay as they are in
// a translation, so copied they say nothing: the copy test leaves them out
// of the count, as own_text does. The pair is coreutils' (Debian package
// coreutils, ja catalogue, /usr/share/locale/ja/LC_MESSAGES/coreutils.mo):
// with them it counted "3 of 4 words copied" and was dropped as untranslated.
TEST(Copy, CopiedAcronymsAreNoEvidence) {
  test::StageHarness h("kind = \"copy\"", "en", "ja");
  EXPECT_EQ(h.reason("* [-]crtscts enable RTS/CTS handshaking", "* [-]crtscts RTS/CTS フロー制御を有効にする"), "");
  // One word of four translated is still a copy.
  EXPECT_EQ(h.reason("Open the selected folder", "Open the selected フォルダ"), "copy:words");
  WordShare w = shared_words("crtscts RTS CTS FILE フロー制御を有効にする", "crtscts enable RTS/CTS handshaking FILE");
  EXPECT_EQ(w.words, 2u);   // crtscts and the clause
  EXPECT_EQ(w.shared, 1u);  // crtscts
  // A target all in capitals is judged on all its words (a review's case).
  test::StageHarness es("kind = \"copy\"");
  EXPECT_EQ(es.reason("REMOVE THE TEMPORARY FILE BEFORE YOU INSTALL THE NEW PACKAGE FROM THE OFFICIAL MIRROR TODAY",
                      "ELIMINAR: THE TEMPORARY FILE BEFORE YOU INSTALL"),
            "copy:words");
}

TEST(Copy, IdenticalAndOverlappingSides) {
  test::StageHarness h("kind = \"copy\"");
  EXPECT_EQ(h.run({{"Open daily.", "Open daily."},
                   {"The garden opens at nine.", "The garden opens at nine!"},
                   {"The garden opens at nine.", "El jardín abre a las nueve."}})
                .reasons,
            (Reasons{"copy:identical", "copy:words", ""}));
  test::StageHarness only_identical("kind = \"copy\"\nmax_overlap = 1.0\nmax_shared_words = 1.0");
  EXPECT_EQ(only_identical.reason("The garden opens at nine.", "The garden opens at nine!"), "");
  EXPECT_DOUBLE_EQ(trigram_overlap("abcd", "abcd"), 1.0);
  EXPECT_DOUBLE_EQ(trigram_overlap("abcd", "wxyz"), 0.0);
  // "abcd": abc, bcd; "abce": abc, bce -> 2*1/4.
  EXPECT_DOUBLE_EQ(trigram_overlap("abcd", "ABCE"), 0.5);
  // The fast bound is never below the exact value.
  std::mt19937 rng(9);
  for (int i = 0; i < 3000; ++i) {
    std::string a, b;
    for (int k = 0; k < 5 + static_cast<int>(rng() % 60); ++k) a += "abcde \u00e9"[rng() % 7];
    for (int k = 0; k < 5 + static_cast<int>(rng() % 60); ++k) b += "abcdf \u00e9"[rng() % 7];
    ASSERT_GE(trigram_overlap_bound(a, b) + 1e-12, trigram_overlap(a, b)) << a << " / " << b;
  }
  // Both cases, the bytes next to the letters ('@', '[', '`', '{'), whole
  // non-ASCII characters and long texts (collisions in the hashed set).
  const std::vector<std::string> parts = {"a", "B", "c", "D", "@", "[", "`", "{", " ", "\u00e9", "\u00c9", "\u0416"};
  for (int i = 0; i < 3000; ++i) {
    std::string a, b;
    int n = 3 + static_cast<int>(rng() % (i % 10 == 0 ? 3000 : 80));
    for (int k = 0; k < n; ++k) a += parts[rng() % parts.size()];
    b = a;
    for (int k = 0; k < n / 3 + 1; ++k) b[rng() % b.size()] = "xYz"[rng() % 3];
    ASSERT_GE(trigram_overlap_bound(a, b) + 1e-12, trigram_overlap(a, b)) << a << " / " << b;
    // Stopping early at a threshold keeps it a bound and keeps the decision.
    for (double t : {0.2, 0.5, 0.8}) {
      double early = trigram_overlap_bound(a, b, t);
      ASSERT_GE(early + 1e-12, trigram_overlap(a, b)) << t << ": " << a << " / " << b;
      ASSERT_EQ(early > t, trigram_overlap_bound(a, b) > t) << t << ": " << a << " / " << b;
    }
  }
}

TEST(Dedup, FirstOccurrenceIsKeptAndNamed) {
  test::StageHarness h("kind = \"dedup\"");
  auto r = h.run({{"a", "b"}, {"a", "c"}, {"a", "b"}, {"x", "y"}, {"a", "b"}});
  EXPECT_EQ(r.reasons, (Reasons{"", "", "duplicate:1", "", "duplicate:1"}));
}

TEST(Dedup, ScopesAndKeys) {
  test::StageHarness src("kind = \"dedup\"\nscope = \"source\"");
  EXPECT_EQ(src.run({{"a", "b"}, {"a", "c"}}).reasons, (Reasons{"", "duplicate:1"}));
  test::StageHarness tgt("kind = \"dedup\"\nscope = \"target\"");
  EXPECT_EQ(tgt.run({{"a", "b"}, {"c", "b"}, {"a", "d"}}).reasons, (Reasons{"", "duplicate:1", ""}));
  test::StageHarness loose("kind = \"dedup\"\nkey = \"loose\"");
  EXPECT_EQ(loose.run({{"Open today!", "¡Abierto hoy!"}, {"open  today", "ABIERTO HOY."}, {"Open 2 days", "Abierto"}})
                .reasons,
            (Reasons{"", "duplicate:1", ""}));
  EXPECT_EQ(loose_key("Árbol 12, ¡sí!"), "árbolsí");
  test::StageHarness wide("kind = \"dedup\"\nhash_bits = 128");
  EXPECT_EQ(wide.run({{"a", "b"}, {"a", "b"}}).reasons, (Reasons{"", "duplicate:1"}));
  test::StageHarness bad("kind = \"dedup\"\nhash_bits = 96");
  EXPECT_FALSE(bad.ok());
}

TEST(Dedup, PairKeyDoesNotConfuseWhereTheSidesSplit) {
  test::StageHarness h("kind = \"dedup\"");
  EXPECT_EQ(h.run({{"ab", "c"}, {"a", "bc"}}).reasons, (Reasons{"", ""}));
}

// The compact table against std::unordered_map on random keys, with growth.
TEST(DedupTable, AgreesWithUnorderedMap) {
  std::mt19937_64 rng(42);
  DedupTable<1> t(4);
  DedupTable<2> t2(4);
  std::unordered_map<uint64_t, uint64_t> ref;
  for (uint64_t line = 1; line <= 200000; ++line) {
    uint64_t k = rng() % 50000;  // many repeats
    uint64_t key[2] = {k * 0x9E3779B97F4A7C15ULL, k};
    auto it = ref.find(k);
    uint64_t want = it == ref.end() ? 0 : it->second;
    if (it == ref.end()) ref[k] = line;
    ASSERT_EQ(t.insert(key, line), want);
    ASSERT_EQ(t2.insert(key, line), want);
  }
  EXPECT_EQ(t.size(), ref.size());
  EXPECT_LE(t.size() * 4, t.capacity() * 3);
}

// The table's size is a function of its key count alone (a spread run's
// bucket jobs report the one table's size from the count): repeats, also
// at exactly 3/4 load, never make it grow.
TEST(DedupTable, SizeFollowsTheKeyCountAlone) {
  for (uint64_t n : {0, 1, 12, 13, 98303, 98304, 98305, 200000}) {
    DedupTable<1> t;
    DedupTable<2> t2;
    for (uint64_t k = 1; k <= n; ++k) {
      uint64_t key[2] = {k * 0x9E3779B97F4A7C15ULL, k};
      t.insert(key, k);
      t2.insert(key, k);
    }
    for (uint64_t k = 1; k <= std::min<uint64_t>(n, 1000); ++k) {  // repeats after the last new key
      uint64_t key[2] = {k * 0x9E3779B97F4A7C15ULL, k};
      ASSERT_EQ(t.insert(key, n + k), k);
      ASSERT_EQ(t2.insert(key, n + k), k);
    }
    EXPECT_EQ(t.memory_bytes(), DedupTable<1>::memory_bytes_after(n)) << n;
    EXPECT_EQ(t2.memory_bytes(), DedupTable<2>::memory_bytes_after(n)) << n;
  }
  // A table that is built and never used (a spread run's reduce job) holds
  // no slots.
  EXPECT_EQ(DedupTable<2>().memory_bytes(), 0u);
  EXPECT_EQ(DedupTable<2>::memory_bytes_after(0), 0u);
}

TEST(Script, DropsWrongScriptSides) {
  test::StageHarness h("kind = \"script\"");
  EXPECT_EQ(h.run({{"Open daily.", "Abierto a diario."},
                   {"Open daily.", "\u0421\u0430\u0434 \u043e\u0442\u043a\u0440\u044b\u0442"},
                   {"123 456", "789"},
                   {"\u039f \u03ba\u03ae\u03c0\u03bf\u03c2", "Abierto"}})
                .reasons,
            (Reasons{"", "script:target", "", "script:source"}));
  test::StageHarness ratio("kind = \"script\"\nmin_ratio = 0.5");
  // 4 Latin letters of 8 counted: exactly one half, kept.
  EXPECT_EQ(ratio.reason("abcd \u0430\u0431\u0432\u0433", "x"), "");
  test::StageHarness custom("kind = \"script\"\ntarget_scripts = [\"Cyrl\", \"Latn\"]", "en", "sr");
  EXPECT_EQ(custom.reason("Open", "\u0421\u0430\u0434 sad"), "");
  test::StageHarness unknown("kind = \"script\"", "en", "xx");
  EXPECT_FALSE(unknown.ok());
  EXPECT_NE(unknown.error().find("target_scripts"), std::string::npos) << unknown.error();
  test::StageHarness badcode("kind = \"script\"\nsource_scripts = [\"Latin1\"]");
  EXPECT_FALSE(badcode.ok());
  EXPECT_NE(badcode.error().find("is not an ISO 15924 script code"), std::string::npos);
}

TEST(Pattern, DropAndRewriteRules) {
  test::StageHarness h(R"(kind = "pattern"
markup = "keep"
rules = [
  { name = "html-tag", pattern = "</?[a-z]+>", action = "rewrite", replacement = " " },
  { name = "phone", pattern = "\\d{3}-\\d{4}", side = "target", action = "drop" },
  { name = "brackets", pattern = "\\[(\\w+)\\]", side = "source", action = "rewrite", replacement = "\\1" },
])");
  ASSERT_TRUE(h.ok()) << h.error();
  auto r = h.run({{"<p>Open <b>daily</b></p>", "<p>Abierto</p>"},
                  {"Call", "Llame al 555-1234"},
                  {"Call 555-1234", "Llame"},
                  {"a [b] c", "[d]"}});
  EXPECT_EQ(r.reasons, (Reasons{"", "phone", "", ""}));
  EXPECT_EQ(r.text[0], (std::pair<std::string, std::string>{"Open daily", "Abierto"}));
  EXPECT_EQ(r.text[3], (std::pair<std::string, std::string>{"a b c", "[d]"}));
}

TEST(Pattern, DefaultRulesStripMarkupAndDropAddresses) {
  test::StageHarness h("kind = \"pattern\"");
  auto r = h.run({{"<p>Open</p>&nbsp;", "<p>Abierto</p>"},
                  {"See https://example.org/x", "Vea"},
                  {"Write to a.b@example.org", "Escriba"}});
  EXPECT_EQ(r.reasons, (Reasons{"", "url", "email"}));
  EXPECT_EQ(r.text[0], (std::pair<std::string, std::string>{"Open", "Abierto"}));
}

// Markup goes from both sides alike or the pair goes; placeholders written
// like tags stay on both sides. The texts are gettext catalogue entries
// (Debian's dpkg, coreutils and GTK 3 message catalogues, English msgids
// with invented targets in their style).
TEST(Pattern, MarkupLeavesBothSidesAlikeOrDropsThePair) {
  test::StageHarness h("kind = \"pattern\"", "en", "de");
  auto r = h.run({
      {"--%s needs a <directory> argument", "--%s braucht ein <Verzeichnis> als Argument"},
      {"<no current directory>", "<kein aktuelles Verzeichnis>"},
      {"--%s needs <link> <name> <path>", "--%s braucht <Verweis> <Name> <Pfad>"},
      {"<b>Warning:</b> file exists", "<b>Warnung:</b> Datei existiert"},
      {"<span weight=\"bold\">Bold</span> text", "<span weight=\"bold\">Fett</span>er Text"},
      {"<b>Warning:</b> file exists", "Warnung: Datei existiert"},
      {"<b>Warning</b> file", "<b>Warnung Datei"},
      {"<i></i>", "<i></i>"},
      {"a &lt; b &amp; c", "a &lt; b &amp; c"},
  });
  EXPECT_EQ(r.reasons, (Reasons{"", "", "", "", "", "markup:unpaired", "markup:unpaired", "emptied:source", ""}));
  EXPECT_EQ(r.text[0].first, "--%s needs a <directory> argument");
  EXPECT_EQ(r.text[0].second, "--%s braucht ein <Verzeichnis> als Argument");
  EXPECT_EQ(r.text[1].first, "<no current directory>");
  EXPECT_EQ(r.text[2].second, "--%s braucht <Verweis> <Name> <Pfad>");
  EXPECT_EQ(r.text[3], (std::pair<std::string, std::string>{"Warning: file exists", "Warnung: Datei existiert"}));
  EXPECT_EQ(r.text[4], (std::pair<std::string, std::string>{"Bold text", "Fett er Text"}));
  EXPECT_EQ(r.text[8], (std::pair<std::string, std::string>{"a < b & c", "a < b & c"}));
  auto c = h.stage().counters();
  auto get = [&](const std::string& k) {
    for (const auto& [name, v] : c)
      if (name == k) return v;
    return uint64_t{999};
  };
  EXPECT_EQ(get("rewritten:markup:source"), 2u);
  EXPECT_EQ(get("rewritten:markup:target"), 2u);
  EXPECT_EQ(get("rewritten:entities:source"), 1u);
}

// The stage asks RE2's prefilter (re2/filtered_re2.h) which strings a text
// must hold before it runs a rule's search. Held to RE2's own answers: the
// stage drops exactly the texts RE2::PartialMatch matches, for rules the
// prefilter handles (addresses, case-insensitive words, 's' and 'k', whose
// case orbits hold U+017F and U+212A) and rules it cannot (no required
// string, a non-ASCII one), on random texts over an alphabet of the atoms'
// bytes in both cases and the folding code points.
TEST(Pattern, PrefilterDropsExactlyWhatRe2Matches) {
  // Reference: RE2 itself. The code points outside ASCII that it matches
  // with an ASCII letter or digit, case-insensitively, are the two the stage
  // looks for.
  std::vector<uint32_t> folding;
  RE2 ascii("(?i)[a-z0-9]");
  for (uint32_t c = 0x80; c < 0x110000; ++c) {
    if (c >= 0xD800 && c < 0xE000) continue;
    char b[4];
    int32_t n = 0;
    U8_APPEND_UNSAFE(b, n, c);
    if (RE2::PartialMatch(re2::StringPiece(b, static_cast<size_t>(n)), ascii)) folding.push_back(c);
  }
  EXPECT_EQ(folding, (std::vector<uint32_t>{0x017F, 0x212A}));

  const std::vector<std::string> patterns = {
      "[A-Za-z0-9._%+-]+@[A-Za-z0-9-]+(\\.[A-Za-z0-9-]+)+",  // the default rules
      "(https?://|www\\.)\\S+",
      "(?i)kelvin",
      "s+k",
      "\\x{212A}",
      "(?i)caf\u00e9 bar",
      "x?y?",
      "(?i)(http|ftp)s?:",
  };
  const std::vector<std::string> alphabet = {"a", "b", "e", "f", "h", "H", "i", "k", "K", "l", "n", "p", "P",
                                             "r", "s", "S", "t", "T", "v", "w", "W", "x", "y", "@", ".", ":",
                                             "/", " ", "-", "\u017f", "\u212a", "\u00e9", "\u00c9", "caf\u00e9",
                                             "http", "HTTPS", "www.", "kelvin", "KELVIN", "a@b.c", "ftp", "caf\u00e9 bar",
                                             "CAF\u00c9 BAR", "\u212aelvin", "\u212aELVIN"};
  std::mt19937 rng(7);
  std::vector<std::string> texts;
  for (int i = 0; i < 3000; ++i) {
    std::string t;
    for (int n = static_cast<int>(rng() % 12) + 1; n > 0; --n) t += alphabet[rng() % alphabet.size()];
    texts.push_back(t);
  }
  for (const std::string& pat : patterns) {
    std::string esc;
    for (char c : pat) {
      if (c == '\\' || c == '"') esc += '\\';
      esc += c;
    }
    test::StageHarness h("kind = \"pattern\"\nmarkup = \"keep\"\nrules = [{ name = \"r\", pattern = \"" + esc +
                         "\", side = \"source\", action = \"drop\" }]");
    ASSERT_TRUE(h.ok()) << h.error();
    RE2 re(pat);
    std::vector<std::pair<std::string, std::string>> pairs;
    for (const std::string& t : texts) pairs.emplace_back(t, "x");
    auto r = h.run(pairs);
    size_t matched = 0;
    for (size_t i = 0; i < texts.size(); ++i) {
      bool m = RE2::PartialMatch(texts[i], re);
      matched += m;
      EXPECT_EQ(r.reasons[i], m ? "r" : "") << pat << " on \"" << texts[i] << "\"";
    }
    EXPECT_GT(matched, 0u) << pat;  // the texts exercise every rule
  }
}

// Hostile text for the prefilter's byte search: a long run of one letter
// against a rule whose required string is a long run of it. The search gives
// up after a bounded number of comparisons and leaves the answer to RE2.
TEST(Pattern, PrefilterOnALongRunOfOneLetterGivesRe2sAnswer) {
  test::StageHarness miss("kind = \"pattern\"\nmarkup = \"keep\"\nrules = [{ name = \"r\", pattern = \"a{300}b\" }]");
  test::StageHarness hit("kind = \"pattern\"\nmarkup = \"keep\"\nrules = [{ name = \"r\", pattern = \"a{300}\" }]");
  ASSERT_TRUE(miss.ok()) << miss.error();
  ASSERT_TRUE(hit.ok()) << hit.error();
  std::string run(200000, 'a');
  EXPECT_EQ(miss.reason(run, "x"), "");
  EXPECT_EQ(miss.reason(run + "b", "x"), "r");
  EXPECT_EQ(hit.reason(run, "x"), "r");
  EXPECT_EQ(hit.reason(std::string(299, 'a'), "x"), "");
}

TEST(Pattern, RewriteThatEmptiesASideDrops) {
  test::StageHarness h(R"(kind = "pattern"
markup = "keep"
rules = [{ name = "brackets", pattern = "\\[[^]]*\\]", side = "target", action = "rewrite" }])");
  ASSERT_TRUE(h.ok()) << h.error();
  EXPECT_EQ(h.run({{"Open", "[abrir]"}, {"Open", "Abrir [x]"}}).reasons, (Reasons{"emptied:target", ""}));
  auto c = h.stage().counters();
  ASSERT_EQ(c.size(), 2u);
  EXPECT_EQ(c[1], (std::pair<std::string, uint64_t>{"rewritten:brackets:target", 1}));
}

TEST(Pattern, InvalidPatternIsAPipelineErrorWithRe2sMessage) {
  test::StageHarness h("kind = \"pattern\"\nrules = [{ name = \"bad\", pattern = \"(unclosed\" }]");
  ASSERT_FALSE(h.ok());
  EXPECT_NE(h.error().find("test.toml:8:"), std::string::npos) << h.error();
  EXPECT_NE(h.error().find("missing )"), std::string::npos) << h.error();
  test::StageHarness noname("kind = \"pattern\"\nrules = [{ pattern = \"x\" }]");
  EXPECT_FALSE(noname.ok());
  test::StageHarness badrepl(
      "kind = \"pattern\"\nrules = [{ name = \"r\", pattern = \"x\", action = \"rewrite\", replacement = \"\\\\2\" }]");
  EXPECT_FALSE(badrepl.ok());
}

TEST(Exclude, ListedSentencesAreDroppedAfterTheSameNormalization) {
  test::TempDir t;
  // One sentence per line, and a TSV pair; written with odd spacing and a
  // decomposed accent that normalization removes.
  test::write_file(t / "eval.txt", "The  garden opens at nine.\nEl jardi\u0301n cierra.\n");
  test::write_file(t / "eval.tsv", "Entry is free.\tLa entrada es gratuita.\nCierra al atardecer\tCloses at sunset\n");
  std::string before = "[[stage]]\nkind = \"normalize\"\n";
  test::StageHarness h("kind = \"exclude\"\nfiles = [\"" + (t / "eval.txt") + "\", \"" + (t / "eval.tsv") + "\"]", "en",
                       "es", before);
  ASSERT_TRUE(h.ok()) << h.error();
  auto r = h.run({{"The garden opens at nine.", "El jardín abre a las nueve."},
                  {"Free entry.", "La entrada es gratuita."},
                  {"Closes at sunset", "Cierra al atardecer."},
                  {"Unrelated.", "Sin relación."},
                  {"The garden closes.", "El jard\u00edn cierra."}});
  EXPECT_EQ(r.reasons, (Reasons{"excluded:source", "excluded:target", "excluded:source", "", "excluded:target"}));
  test::StageHarness src_only("kind = \"exclude\"\nmatch = \"source\"\nfiles = [\"" + (t / "eval.tsv") + "\"]");
  EXPECT_EQ(src_only.reason("Free entry.", "La entrada es gratuita."), "");
  test::StageHarness missing("kind = \"exclude\"\nfiles = [\"" + (t / "nope.txt") + "\"]");
  EXPECT_FALSE(missing.ok());
}

}  // namespace
}  // namespace sheaf
