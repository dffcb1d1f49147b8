// A side's own text (stages/own_text.h) and HTML markup (stages/markup.h).
// Example texts are entries of Debian's message catalogues (GLib, GTK 3,
// coreutils, dpkg: msgids and their translations), as the quality harness
// reads them (tests/quality/sets.txt); the expected values follow from the
// rules in the headers.
#include <gtest/gtest.h>

#include "stages/markup.h"
#include "stages/own_text.h"

namespace sheaf {
namespace {

std::string own(std::string_view side, std::string_view other, size_t* letters = nullptr) {
  std::string out;
  size_t n = own_text(side, other, out);
  if (letters) *letters = n;
  return out;
}

TEST(OwnText, SharedSpansPlaceholdersAndAddressesGo) {
  size_t letters = 0;
  // GTK 3, Japanese: the product name is the source's.
  EXPECT_EQ(own("Microsoft Comfort Curve キーボード 2000", "Microsoft Comfort Curve Keyboard 2000", &letters),
            "キーボード");
  EXPECT_EQ(letters, 5u);
  // printf conversions, options, metavariables in angle brackets, brace
  // and shell variables, entities, URLs and e-mail addresses.
  EXPECT_EQ(own("--%s a besoin de <lien> %1$s %-20.127s %lu %% {0} {{name}} ${HOME} $PATH &amp; &#160;", ""),
            "a besoin de");
  EXPECT_EQ(own("Voir https://example.org/x ou www.example.org ou a.b@example.org -e --easy-only", ""), "Voir ou ou");
  // "50% discount" is no conversion: the space flag is not read.
  EXPECT_EQ(own("50% discount", ""), "discount");
}

TEST(OwnText, IdentifiersAcronymsAndAcceleratorsGo) {
  // GTK 3, Traditional Chinese: the accelerator of "_Refresh".
  EXPECT_EQ(own("重新整理(_R)", "_Refresh"), "重新整理");
  // GLib: camel-case identifiers and acronyms are no evidence of a language.
  EXPECT_EQ(own("Передан недопустимый GSeekType", "Invalid GSeekType supplied"), "Передан недопустимый");
  EXPECT_EQ(own("無法取得真實 GID ID", "cannot get real GID"), "無法取得真實");
  // GTK 3: key names written with '_' in the source, a space in the target.
  EXPECT_EQ(own("Page Down", "Page_Down"), "");
  EXPECT_EQ(own("Annu_ler", "Cance_l"), "Annuler");  // the accelerator's '_' goes, the word stays
  // Words with digits (numbers, A4, UTF-8's parts) go.
  EXPECT_EQ(own("A4 Tab UTF8 x86", ""), "Tab");
}

TEST(OwnText, SharedWordsCountCopiedWords) {
  WordShare w = shared_words("The garden opens at nine!", "The garden opens at nine.");
  EXPECT_EQ(w.words, 5u);
  EXPECT_EQ(w.shared, 5u);
  w = shared_words("Timeout in secondi", "Timeout in seconds");
  EXPECT_EQ(w.words, 3u);
  EXPECT_EQ(w.shared, 2u);
  w = shared_words("requiert --%s, --%s ou --%s", "need --%s, --%s or --%s");
  EXPECT_EQ(w.words, 2u);
  EXPECT_EQ(w.shared, 0u);
}

std::vector<std::string> keys(std::string_view s) {
  std::vector<std::string> k;
  for (const auto& t : find_markup(s)) k.push_back(t.key);
  return k;
}

TEST(Markup, OnlyElementNamesUsedAsMarkup) {
  using V = std::vector<std::string>;
  EXPECT_EQ(keys("<b>Bold</b> and <span weight=\"bold\">x</span>"), (V{"b", "/b", "span", "/span"}));
  EXPECT_EQ(keys("line<br>break<br/>and<hr />"), (V{"br", "br", "hr"}));
  // Metavariables: not element names, or element names used bare and never closed.
  EXPECT_EQ(keys("--%s needs a <directory> argument"), V{});
  EXPECT_EQ(keys("--%s needs <link> <name> <path>"), V{});
  EXPECT_EQ(keys("cp <source> <dest>"), V{});
  // A stray closing tag is markup (damage the other side will not match).
  EXPECT_EQ(keys("text</i>"), V{"/i"});
  // Uppercase names are element names too; "<b" cut short is not a tag.
  EXPECT_EQ(keys("<B>x</B> <b"), (V{"b", "/b"}));
}

TEST(Markup, RemovesTagsAndDecodesEntities) {
  std::string t = "<b>a</b> &lt;x&gt; &amp; &quot;q&quot; &#233;&#xE9;&nbsp;&bogus; &#0;";
  size_t entities = 0;
  EXPECT_EQ(remove_markup(t, find_markup(t), &entities), " a  <x> & \"q\" éé &bogus; &#0;");
  EXPECT_EQ(entities, 8u);
}

}  // namespace
}  // namespace sheaf
