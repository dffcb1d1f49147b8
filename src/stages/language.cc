#include "stages/language.h"

#include <cstdio>  // CLD2's public header needs it first
#include <cld2/public/compact_lang_det.h>
#include <unicode/uchar.h>
#include <unicode/utf8.h>

#include <algorithm>
#include <vector>

namespace sheaf {

namespace {

std::string primary(std::string_view code) { return std::string(code.substr(0, code.find_first_of("-_"))); }

size_t count_letters(std::string_view s) {
  const uint8_t* p = reinterpret_cast<const uint8_t*>(s.data());
  int32_t n = static_cast<int32_t>(s.size()), i = 0;
  size_t letters = 0;
  while (i < n) {
    if (p[i] < 0x80) {
      letters += ((p[i] | 0x20) >= 'a' && (p[i] | 0x20) <= 'z');
      ++i;
      continue;
    }
    UChar32 c;
    U8_NEXT(p, i, n, c);
    if (c >= 0 && u_isalpha(c)) ++letters;
  }
  return letters;
}

}  // namespace

std::vector<std::string> related_languages(std::string_view lang) {
  // Close relatives that CLD2 tends to report for short sentences (common
  // practice, no published source; seen on the sample corpus: Spanish notices
  // identified as Galician or Catalan).
  static const std::vector<std::vector<std::string>> kGroups = {
      {"es", "gl", "ca", "pt"}, {"pt", "gl", "es"}, {"gl", "es", "pt"}, {"ca", "es", "oc"},
      {"no", "nb", "nn", "da", "sv"}, {"nb", "no", "nn", "da"}, {"nn", "no", "nb"}, {"da", "no", "nb", "sv"},
      {"sv", "no", "da"}, {"sr", "hr", "bs", "sh"}, {"hr", "sr", "bs", "sh"}, {"bs", "hr", "sr", "sh"},
      {"id", "ms"}, {"ms", "id"}, {"cs", "sk"}, {"sk", "cs"}, {"ru", "uk", "be"}, {"uk", "ru"},
      {"be", "ru"}, {"fa", "ur"}, {"ur", "fa"}, {"hi", "mr", "ne"}, {"zh", "zh-Hant", "ja"}, {"af", "nl"},
      {"nl", "af"}, {"mk", "bg"}, {"bg", "mk"},
  };
  std::string l = primary(lang);
  for (const auto& g : kGroups)
    if (g[0] == l) return {g.begin() + 1, g.end()};
  return {};
}

LanguageGuess identify_language(std::string_view text) {
  bool reliable = false;
  CLD2::Language lang = CLD2::DetectLanguage(text.data(), static_cast<int>(text.size()), true, &reliable);
  return {CLD2::LanguageCode(lang), reliable};
}

bool cld2_knows(std::string_view code) {
  std::string c(code);
  return CLD2::GetLanguageFromName(c.c_str()) != CLD2::UNKNOWN_LANGUAGE;
}

namespace {

class LanguageStage : public Stage {
 public:
  LanguageStage(const StageContext& ctx, int64_t min_letters, std::vector<std::string> accept[2])
      : index_(ctx.index), min_letters_(static_cast<size_t>(min_letters)) {
    for (int s = 0; s < 2; ++s) accept_[s] = std::move(accept[s]);
  }
  void map(PairBatch& batch) override {
    for (Pair& p : batch.pairs) {
      for (int side = 0; side < 2 && p.kept(); ++side) {
        if (count_letters(p.text[side]) < min_letters_) continue;
        LanguageGuess g = identify_language(p.text[side]);
        if (!g.reliable || g.code == "un") continue;
        std::string got = primary(g.code);
        if (std::find(accept_[side].begin(), accept_[side].end(), got) == accept_[side].end()) batch.drop(p, index_, std::string("language:") + side_name(side) + "=" + g.code);
      }
    }
  }

 private:
  int index_;
  size_t min_letters_;
  std::vector<std::string> accept_[2];  // primary subtags accepted per side
};

}  // namespace

const StageKind& language_kind() {
  static const StageKind k{
      "language",
      "language identification with CLD2 (the slowest filter: keep it late)",
      StageRole::kFilter,
      {
          {"min_letters", FieldType::kInt, int64_t{20}, "sides with fewer letters are not judged", 0, 1e9},
          {"accept_related", FieldType::kBool, true,
           "also accept close relatives CLD2 confuses on short text (es: gl, ca, pt; see docs)"},
          {"source_accept", FieldType::kStringList, std::vector<std::string>{},
           "further language codes accepted on the source side"},
          {"target_accept", FieldType::kStringList, std::vector<std::string>{},
           "further language codes accepted on the target side"},
      }};
  return k;
}

Result<std::unique_ptr<Stage>> make_language(const StageContext& ctx) {
  for (int side = 0; side < 2; ++side) {
    const std::string& lang = side == 0 ? ctx.pipeline->corpus.source_lang : ctx.pipeline->corpus.target_lang;
    if (!cld2_knows(primary(lang)))
      return Error(ErrorKind::kPipeline,
                   "stage \"" + ctx.spec->name + "\": CLD2 does not know the " + side_name(side) + " language \"" +
                       lang + "\"; set [corpus]." + side_name(side) + "_lang to an ISO 639-1 code or remove this stage",
                   ctx.spec->where);
  }
  const Params& p = ctx.spec->params;
  std::vector<std::string> accept[2];
  for (int side = 0; side < 2; ++side) {
    const std::string& lang = side == 0 ? ctx.pipeline->corpus.source_lang : ctx.pipeline->corpus.target_lang;
    accept[side].push_back(primary(lang));
    if (p.flag("accept_related"))
      for (const auto& r : related_languages(lang)) accept[side].push_back(primary(r));
    for (const auto& a : p.list(side == 0 ? "source_accept" : "target_accept")) accept[side].push_back(primary(a));
  }
  return std::unique_ptr<Stage>(std::make_unique<LanguageStage>(ctx, p.integer("min_letters"), accept));
}

}  // namespace sheaf
