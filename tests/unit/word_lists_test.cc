// word_lists and the language stage's word test. Dictionaries: Debian's
// hunspell-es, -pt-br, -pt-pt, -fr, -pl, -cs, -en-us (LibreOffice's
// dictionaries; licences in /usr/share/doc/hunspell-*/copyright), the
// test install list's (scripts/debian-packages.txt). Texts: translated
// message catalogues Debian ships (dpkg's and coreutils' es, pt_BR, fr, pl
// catalogues, /usr/share/locale/LANG/LC_MESSAGES/), one msgid's translations.
#include "stages/word_lists.h"

#include <gtest/gtest.h>

#include <filesystem>

#include "stage_util.h"
#include "stages/language.h"

namespace sheaf {
namespace {

const std::string kDir = "/usr/share/hunspell";

bool installed(const char* name) { return std::filesystem::exists(kDir + "/" + name + ".dic"); }

#define NEED_DICTIONARIES()                                                                                           \
  if (!installed("es_ES") || !installed("pt_BR") || !installed("pt_PT") || !installed("pl_PL") || !installed("fr") || \
      !installed("cs_CZ"))                                                                                            \
  GTEST_SKIP() << "spelling dictionaries missing (scripts/install-deps build test)"

std::vector<std::string> words(std::string_view text, size_t most = 100) {
  std::vector<std::string> out;
  for (auto w : dictionary_words(text, most)) out.emplace_back(w);
  return out;
}

TEST(WordLists, WordsAreLetterRunsWithInnerApostrophes) {
  EXPECT_EQ(words("impossible d'analyser l’horodatage « x »"),
            (std::vector<std::string>{"impossible", "d'analyser", "l’horodatage"}));
  // One-letter words say nothing; digits and punctuation cut words.
  EXPECT_EQ(words("a ser 3D-Drucker's' fin."), (std::vector<std::string>{"ser", "Drucker's", "fin"}));
  EXPECT_EQ(words("uno dos tres cuatro", 2), (std::vector<std::string>{"uno", "dos"}));
  EXPECT_TRUE(words("").empty());
}

TEST(WordLists, DictionariesAreFoundByLanguageCode) {
  NEED_DICTIONARIES();
  ASSERT_NE(find_word_list(kDir, "pt-BR"), nullptr);
  EXPECT_EQ(word_list_name(find_word_list(kDir, "pt-BR")), "pt_BR");  // the region when there is one
  EXPECT_EQ(word_list_name(find_word_list(kDir, "pt")), "pt_PT");     // else the primary subtag's own region
  EXPECT_EQ(word_list_name(find_word_list(kDir, "es")), "es_ES");
  EXPECT_EQ(word_list_name(find_word_list(kDir, "fr")), "fr");     // a file named by the subtag alone
  EXPECT_EQ(word_list_name(find_word_list(kDir, "cs")), "cs_CZ");  // else the first in name order
  EXPECT_EQ(find_word_list(kDir, "qq"), nullptr);
  EXPECT_EQ(find_word_list("", "es"), nullptr);
  EXPECT_EQ(find_word_list("/nonexistent", "es"), nullptr);
  EXPECT_EQ(find_word_list(kDir, "es"), find_word_list(kDir, "es-ES"));  // loaded once
}

TEST(WordLists, AcceptsTheLanguagesOwnWords) {
  NEED_DICTIONARIES();
  const SpellingDictionary* es = find_word_list(kDir, "es");
  const SpellingDictionary* pt = find_word_list(kDir, "pt-BR");
  const SpellingDictionary* pl = find_word_list(kDir, "pl");
  // dpkg: "en el nombre del paquete en la línea" / "no nome do pacote na linha".
  EXPECT_TRUE(word_list_accepts(es, "línea"));
  EXPECT_FALSE(word_list_accepts(es, "linha"));
  EXPECT_TRUE(word_list_accepts(pt, "linha"));
  EXPECT_TRUE(word_list_accepts(pt, "línea"));  // pt_BR spells it too: such words say nothing
  EXPECT_TRUE(word_list_accepts(es, "nombre"));
  EXPECT_FALSE(word_list_accepts(pt, "nombre"));
  EXPECT_FALSE(word_list_accepts(es, "pacote"));
  EXPECT_TRUE(word_list_accepts(es, "Línea"));  // sentence case, as in running text
  // pl_PL is in ISO 8859-2: words are converted (coreutils: "nie udało się usunąć katalogu").
  EXPECT_TRUE(word_list_accepts(pl, "usunąć"));
  EXPECT_TRUE(word_list_accepts(pl, "katalogu"));
  EXPECT_FALSE(word_list_accepts(pl, "directorio"));
  EXPECT_FALSE(word_list_accepts(pl, "日本"));  // not writable in the dictionary's encoding
  // The cache answers per list (bit i: lists[i]) what the lists answer.
  std::vector<const SpellingDictionary*> lists = {es, pt};
  WordCache cache(64);  // small: words are evicted and asked again
  auto ws = dictionary_words("fim de linha inesperado no nome do pacote na linha", 32);
  ASSERT_EQ(ws.size(), 10u);
  size_t only_es = 0, only_pt = 0;
  for (int round = 0; round < 2; ++round) {
    for (auto w : ws) {
      uint32_t m = cache.accepted(lists, 7, w, 3);
      EXPECT_EQ(m, (word_list_accepts(es, w) ? 1u : 0u) | (word_list_accepts(pt, w) ? 2u : 0u)) << w;
      EXPECT_EQ(cache.accepted(lists, 7, w, 2), m & 2u) << w;  // only the lists asked for
      only_es += round == 0 && m == 1;
      only_pt += round == 0 && m == 2;
    }
  }
  EXPECT_EQ(only_es, 0u);  // no word only Spanish spells
  EXPECT_GE(only_pt, 4u);  // fim, linha (twice), pacote, ...: Portuguese only
}

// The same msgid's translations, from Debian's catalogues: the words tell
// Spanish and Portuguese apart where CLD2's n-grams alone did not.
TEST(WordLists, LanguageStageTellsRelatedLanguagesApartByWords) {
  NEED_DICTIONARIES();
  const std::string en = "unexpected end of line in package name at line %d";                // dpkg
  const std::string es = "fin de línea inesperado en el nombre del paquete en la línea %d";  // dpkg es
  const std::string pt = "fim de linha inesperado no nome do pacote na linha %d";            // dpkg pt_BR
  test::StageHarness in_es("kind = \"language\"", "en", "es");
  ASSERT_TRUE(in_es.ok()) << in_es.error();
  EXPECT_EQ(in_es.reason(en, es), "");
  EXPECT_EQ(in_es.reason(en, pt), "language:target=pt");
  test::StageHarness in_pt("kind = \"language\"", "en", "pt-BR");
  EXPECT_EQ(in_pt.reason(en, pt), "");
  EXPECT_EQ(in_pt.reason(en, es), "language:target=es");
  // coreutils: "failed to remove directory %s" in fr, es, pt_BR.
  const std::string en2 = "failed to remove directory %s";
  test::StageHarness in_fr("kind = \"language\"", "en", "fr");
  EXPECT_EQ(in_fr.reason(en2, "impossible de supprimer le répertoire %s"), "");
  EXPECT_EQ(in_fr.reason(en2, "falhou em remover o diretório %s"), "language:target=pt");
  // Without dictionaries the stage is CLD2 alone (it calls this Portuguese
  // line Portuguese, but the letters say nothing and, hinted, it says Spanish).
  test::StageHarness none("kind = \"language\"\ndictionaries = \"\"", "en", "es");
  EXPECT_EQ(none.reason(en, pt), "");
  auto c = in_es.stage().counters();
  auto get = [&](const std::string& k) {
    for (const auto& [name, v] : c)
      if (name == k) return v;
    return uint64_t{999};
  };
  EXPECT_GE(get("words-decided:target"), 1u);
  // The English sources and the Spanish target are settled by their words
  // (no CLD2 question): "línea", "nombre", "paquete" are Spanish words that
  // the Portuguese, Galician, Catalan, Italian and French dictionaries lack.
  EXPECT_EQ(get("settled-by-words:source"), 2u);
  EXPECT_EQ(get("settled-by-words:target"), 1u);
  EXPECT_EQ(get("judged:target"), 1u);  // the Portuguese line went to CLD2
}

TEST(WordLists, FamiliesAreTheWordTestsCandidates) {
  auto f = family_languages("pt-BR");
  EXPECT_NE(std::find(f.begin(), f.end(), "es"), f.end());
  EXPECT_NE(std::find(f.begin(), f.end(), "fr"), f.end());
  EXPECT_EQ(std::find(f.begin(), f.end(), "pt"), f.end());  // not itself
  EXPECT_TRUE(family_languages("ja").empty());
}

}  // namespace
}  // namespace sheaf
