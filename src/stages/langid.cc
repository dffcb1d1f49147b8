#include "stages/langid.h"

#include <cstdio>  // CLD2's public header needs it first
#include <cld2/public/compact_lang_det.h>
#include <unicode/uchar.h>
#include <unicode/utf8.h>

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

class LangidStage : public Stage {
 public:
  LangidStage(const StageContext& ctx, int64_t min_letters)
      : index_(ctx.index), min_letters_(static_cast<size_t>(min_letters)) {
    want_[0] = primary(ctx.pipeline->corpus.source_lang);
    want_[1] = primary(ctx.pipeline->corpus.target_lang);
  }
  void map(PairBatch& batch) override {
    for (Pair& p : batch.pairs) {
      for (int side = 0; side < 2 && p.kept(); ++side) {
        if (count_letters(p.text[side]) < min_letters_) continue;
        LanguageGuess g = identify_language(p.text[side]);
        if (!g.reliable || g.code == "un") continue;
        std::string got = primary(g.code);
        if (got != want_[side]) batch.drop(p, index_, std::string("language:") + side_name(side) + "=" + g.code);
      }
    }
  }

 private:
  int index_;
  size_t min_letters_;
  std::string want_[2];
};

}  // namespace

const StageKind& langid_kind() {
  static const StageKind k{
      "langid",
      "language identification with CLD2 (the slowest filter: keep it late)",
      StageRole::kFilter,
      {
          {"min_letters", FieldType::kInt, int64_t{20}, "sides with fewer letters are not judged", 0, 1e9},
      }};
  return k;
}

Result<std::unique_ptr<Stage>> make_langid(const StageContext& ctx) {
  for (int side = 0; side < 2; ++side) {
    const std::string& lang = side == 0 ? ctx.pipeline->corpus.source_lang : ctx.pipeline->corpus.target_lang;
    if (!cld2_knows(primary(lang)))
      return Error(ErrorKind::kPipeline,
                   "stage \"" + ctx.spec->name + "\": CLD2 does not know the " + side_name(side) + " language \"" +
                       lang + "\"; set [corpus]." + side_name(side) + "_lang to an ISO 639-1 code or remove this stage",
                   ctx.spec->where);
  }
  return std::unique_ptr<Stage>(std::make_unique<LangidStage>(ctx, ctx.spec->params.integer("min_letters")));
}

}  // namespace sheaf
