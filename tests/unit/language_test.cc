// language: CLD2 on real text. The text comes from translated manual pages that
// Debian ships (packages manpages-es, -de, -fr, -ru: manpages-l10n, GPL-3+;
// manpages-ja: GPL-2+/BSD and others; manpages-zh: GFDL-1.2+ and others; see
// each package's /usr/share/doc/*/copyright), so no test text is written for
// the test.
#include <gtest/gtest.h>

#include <cstdio>
#include <regex>

#include "stage_util.h"
#include "stages/language.h"

namespace sheaf {
namespace {

// Paragraphs of running text from a gzipped man page: markup lines dropped,
// font escapes removed, lines joined, only paragraphs of `min_bytes` or more.
std::vector<std::string> paragraphs(const std::string& page, size_t min_bytes = 200, size_t most = 8) {
  std::vector<std::string> out;
  FILE* f = ::popen(("zcat " + page + " 2>/dev/null").c_str(), "r");
  if (f == nullptr) return out;
  std::string cur, line;
  char buf[8192];
  static const std::regex escapes(R"(\\f[BIRP]|\\f\(..|\\&|\\\(..|\\\[[^\]]*\]|\\[-e^|])");
  auto flush = [&] {
    if (cur.size() >= min_bytes && out.size() < most && cur.find("--") == std::string::npos) out.push_back(cur);
    cur.clear();
  };
  while (std::fgets(buf, sizeof buf, f)) {
    line = buf;
    if (!line.empty() && line.back() == '\n') line.pop_back();
    if (line.empty() || line[0] == '.' || line[0] == '\'') {
      flush();
      continue;
    }
    line = std::regex_replace(line, escapes, "");
    cur += (cur.empty() ? "" : " ") + line;
  }
  flush();
  ::pclose(f);
  return out;
}

struct Lang {
  const char* code;  // as CLD2 reports it
  const char* page;
};
const Lang kLangs[] = {
    {"es", "/usr/share/man/es/man1/cp.1.gz"},    {"de", "/usr/share/man/de/man1/cp.1.gz"},
    {"fr", "/usr/share/man/fr/man1/cp.1.gz"},    {"ru", "/usr/share/man/ru/man1/ls.1.gz"},
    {"ja", "/usr/share/man/ja/man1/cp.1.gz"},    {"zh", "/usr/share/man/zh_CN/man1/bash.1.gz"},
};

TEST(Language, IdentifiesRealTextInSixLanguages) {
  for (const Lang& l : kLangs) {
    auto paras = paragraphs(l.page);
    ASSERT_GE(paras.size(), 3u) << l.page << " (install scripts/install-deps build test)";
    size_t right = 0;
    for (const auto& p : paras) {
      LanguageGuess g = identify_language(p);
      right += g.reliable && g.code[0] == l.code;
    }
    EXPECT_GE(right * 10, paras.size() * 8) << l.code << ": " << right << " of " << paras.size();
  }
}

TEST(Language, StageKeepsTheRightLanguageAndDropsAnother) {
  auto english = paragraphs("/usr/share/man/man1/cp.1.gz", 120, 1);
  ASSERT_EQ(english.size(), 1u);
  for (size_t i = 0; i < std::size(kLangs); ++i) {
    const Lang& own = kLangs[i];
    const Lang& other = kLangs[(i + 1) % std::size(kLangs)];  // must be rejected
    auto mine = paragraphs(own.page, 200, 3), theirs = paragraphs(other.page, 200, 3);
    test::StageHarness h("kind = \"language\"\naccept_related = false", "en", own.code);
    ASSERT_TRUE(h.ok()) << h.error();
    size_t kept = 0, dropped = 0;
    for (const auto& p : mine) kept += h.reason(english[0], p).empty();
    for (const auto& p : theirs) dropped += h.reason(english[0], p) == std::string("language:target=") + other.code;
    EXPECT_GE(kept + 1, mine.size()) << own.code;
    EXPECT_GE(dropped + 1, theirs.size()) << own.code << " should reject " << other.code;
  }
}

TEST(Language, ShortSidesAreNotJudgedAndRelativesAreAccepted) {
  auto es = paragraphs("/usr/share/man/es/man1/cp.1.gz", 200, 1);
  ASSERT_EQ(es.size(), 1u);
  test::StageHarness h("kind = \"language\"\nmin_letters = 20", "en", "de");
  EXPECT_EQ(h.reason("Open.", "Hola, buenos dias."), "");   // under 20 letters: not judged
  EXPECT_EQ(h.reason("Open.", es[0]), "language:target=es");
  test::StageHarness accept("kind = \"language\"\ntarget_accept = [\"es\"]", "en", "de");
  EXPECT_EQ(accept.reason("Open.", es[0]), "");
  test::StageHarness related("kind = \"language\"\naccept_related = true", "en", "gl");  // Galician accepts Spanish
  EXPECT_EQ(related.reason("Open.", es[0]), "");
  EXPECT_EQ(related_languages("es"), (std::vector<std::string>{"gl", "ca", "pt"}));
  test::StageHarness unknown("kind = \"language\"", "en", "qq");
  EXPECT_FALSE(unknown.ok());
}

// Related languages are told apart by default. Texts: GLib's message
// catalogues in Debian's libglib2.0-data (ru, uk), one msgid's translations.
TEST(Language, RelatedLanguagesAreToldApart) {
  const std::string en = "Invalid UTF-8 encoded text in name — not valid “%s”";
  const std::string ru = "Недопустимый UTF-8 текст в имени — неправильная последовательность «%s»";
  const std::string uk = "Некоректний текст у кодуванні UTF-8 у назві — не є коректним «%s»";
  test::StageHarness in_ru("kind = \"language\"", "en", "ru");
  EXPECT_EQ(in_ru.reason(en, ru), "");
  EXPECT_EQ(in_ru.reason(en, uk), "language:target=uk");
  test::StageHarness in_uk("kind = \"language\"", "en", "uk");
  EXPECT_EQ(in_uk.reason(en, uk), "");
  EXPECT_EQ(in_uk.reason(en, ru), "language:target=ru");
}

TEST(Language, CodesCompareAsCld2ReadsThemAndScriptsSettleSomeSides) {
  EXPECT_EQ(language_key("he"), language_key("iw"));
  EXPECT_EQ(language_key("zh-TW"), "zh");
  EXPECT_EQ(language_key("pt-BR"), "pt");
  EXPECT_EQ(language_key("nb"), "no");
  // GTK 3's Hebrew catalogue (libgtk-3-common): CLD2 names Hebrew "iw".
  test::StageHarness he("kind = \"language\"", "en", "he");
  EXPECT_EQ(he.reason("The file could not be moved to the Trash", "לא ניתן להעביר את הקובץ לאשפה"), "");
  // Thai: the script settles it, CLD2 is not asked (GLib's Thai catalogue).
  // (No dictionaries, so that the English source goes to CLD2; with
  // them its words settle it: word_lists_test.cc.)
  test::StageHarness th("kind = \"language\"\ndictionaries = \"\"", "en", "th");
  EXPECT_EQ(th.reason("Failed to change to directory '%s' (%s)", "เข้าไปที่ไดเรกทอรี '%s' ไม่สำเร็จ (%s)"), "");
  auto c = th.stage().counters();
  auto get = [&](const std::string& k) {
    for (const auto& [name, v] : c)
      if (name == k) return v;
    return uint64_t{999};
  };
  EXPECT_EQ(get("settled-by-script:target"), 1u);
  EXPECT_EQ(get("judged:target"), 0u);
  EXPECT_EQ(get("judged:source"), 1u);
}

}  // namespace
}  // namespace sheaf
