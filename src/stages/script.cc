#include "stages/script.h"

#include <unicode/uchar.h>
#include <unicode/utf8.h>

#include <algorithm>
#include <cstring>
#include <map>

#include "core/text.h"
#include "core/utf8.h"
#include "stages/own_text.h"

namespace sheaf {

std::vector<std::string> scripts_for_language(std::string_view lang) {
  std::string l(lang.substr(0, lang.find_first_of("-_")));
  static const std::map<std::string, std::vector<std::string>> kTable = {
      {"ja", {"Hani", "Hira", "Kana"}},
      {"zh", {"Hani"}},
      {"ko", {"Hang", "Hani"}},
      {"ru", {"Cyrl"}},
      {"uk", {"Cyrl"}},
      {"be", {"Cyrl"}},
      {"bg", {"Cyrl"}},
      {"mk", {"Cyrl"}},
      {"kk", {"Cyrl"}},
      {"ky", {"Cyrl"}},
      {"mn", {"Cyrl"}},
      {"sr", {"Cyrl", "Latn"}},
      {"el", {"Grek"}},
      {"ar", {"Arab"}},
      {"fa", {"Arab"}},
      {"ur", {"Arab"}},
      {"ps", {"Arab"}},
      {"he", {"Hebr"}},
      {"yi", {"Hebr"}},
      {"hi", {"Deva"}},
      {"mr", {"Deva"}},
      {"ne", {"Deva"}},
      {"bn", {"Beng"}},
      {"pa", {"Guru"}},
      {"gu", {"Gujr"}},
      {"ta", {"Taml"}},
      {"te", {"Telu"}},
      {"kn", {"Knda"}},
      {"ml", {"Mlym"}},
      {"si", {"Sinh"}},
      {"th", {"Thai"}},
      {"lo", {"Laoo"}},
      {"km", {"Khmr"}},
      {"my", {"Mymr"}},
      {"ka", {"Geor"}},
      {"hy", {"Armn"}},
      {"am", {"Ethi"}},
  };
  auto it = kTable.find(l);
  if (it != kTable.end()) return it->second;
  // Languages written in the Latin script.
  static const char* kLatin[] = {"en", "es", "fr", "de", "it", "pt", "nl", "ca", "gl", "eu", "da", "sv",
                                 "nb", "nn", "no", "is", "fi", "et", "lv", "lt", "pl", "cs", "sk", "sl",
                                 "hr", "bs", "ro", "hu", "tr", "az", "sq", "mt", "ga", "cy", "id", "ms",
                                 "tl", "vi", "sw", "af", "eo", "la", "uz", "ha", "yo", "zu", "xh"};
  for (const char* c : kLatin)
    if (l == c) return {"Latn"};
  return {};
}

ScriptCount count_scripts(std::string_view text, const std::vector<UScriptCode>& expected) {
  ScriptCount r;
  if (is_ascii(text)) {  // ASCII letters are all Latin
    for (unsigned char c : text) r.letters += ((c | 0x20) >= 'a' && (c | 0x20) <= 'z');
    if (std::find(expected.begin(), expected.end(), USCRIPT_LATIN) != expected.end()) r.expected = r.letters;
    return r;
  }
  Utf8Cursor u(text);
  bool latin_expected = std::find(expected.begin(), expected.end(), USCRIPT_LATIN) != expected.end();
  while (!u.done()) {
    if (u.byte() < 0x80) {
      unsigned char c = u.take();
      if ((c | 0x20) >= 'a' && (c | 0x20) <= 'z') {
        ++r.letters;
        r.expected += latin_expected;
      }
      continue;
    }
    UChar32 c = u.next();
    if (c < 0 || !u_isalpha(c) || !(U_GET_GC_MASK(c) & U_GC_L_MASK)) continue;
    UErrorCode st = U_ZERO_ERROR;
    UScriptCode s = uscript_getScript(c, &st);
    if (s == USCRIPT_COMMON || s == USCRIPT_INHERITED) continue;
    ++r.letters;
    if (std::find(expected.begin(), expected.end(), s) != expected.end()) ++r.expected;
  }
  return r;
}

ScriptTable::ScriptTable(std::vector<UScriptCode> expected) : expected_(std::move(expected)), bmp_(0x10000, 0) {
  latin_ = std::find(expected_.begin(), expected_.end(), USCRIPT_LATIN) != expected_.end();
  for (UChar32 c = 0x80; c < 0x10000; ++c) {
    if (c >= 0xD800 && c <= 0xDFFF) continue;
    char buf[4];
    int32_t k = 0;
    U8_APPEND_UNSAFE(buf, k, c);
    ScriptCount one = count_scripts(std::string_view(buf, static_cast<size_t>(k)), expected_);
    bmp_[static_cast<size_t>(c)] = one.letters == 0 ? 0 : one.expected ? 1 : 2;
  }
}

ScriptCount ScriptTable::count(std::string_view text) const {
  ScriptCount r;
  Utf8Cursor u(text);
  while (!u.done()) {
    // Up to eight ASCII bytes at a time (core/utf8.h's ascii_run): a byte is
    // a letter when, with the case bit set, it lies in 'a'..'z'.
    AsciiRun w;
    if (u.ascii_run(w) && w.ascii > 0) {
      uint64_t x = w.word | (kEachByte * 0x20);
      uint64_t letters = ascii_bytes_at_least(x, 'a') & ascii_bytes_below(x, 'z' + 1) & w.mask;
      auto k = static_cast<uint32_t>(((letters >> 7) * 0x0101010101010101ULL) >> 56);  // sum of the bytes' flags
      r.letters += k;
      r.expected += latin_ ? k : 0;
      u.skip(static_cast<size_t>(w.ascii));
      continue;
    }
    if (u.byte() < 0x80) {
      unsigned char c = u.take();
      if ((c | 0x20) >= 'a' && (c | 0x20) <= 'z') {
        ++r.letters;
        r.expected += latin_;
      }
      continue;
    }
    size_t at = u.pos();
    UChar32 c = u.next();
    if (c < 0) continue;
    if (c < 0x10000) {
      uint8_t k = bmp_[static_cast<size_t>(c)];
      r.letters += k != 0;
      r.expected += k == 1;
    } else {
      ScriptCount one = count_scripts(text.substr(at, u.pos() - at), expected_);
      r.letters += one.letters;
      r.expected += one.expected;
    }
  }
  return r;
}

namespace {

class ScriptStage : public Stage {
 public:
  ScriptStage(const StageContext& ctx, std::vector<UScriptCode> s, std::vector<UScriptCode> t, double min_ratio,
              int64_t min_letters)
      : index_(ctx.index),
        tables_{ScriptTable(std::move(s)), ScriptTable(std::move(t))},
        min_ratio_(min_ratio),
        min_letters_(static_cast<size_t>(min_letters)) {}
  void map(PairBatch& batch) override {
    std::string own;
    for (Pair& p : batch.pairs) {
      for (int side = 0; side < 2 && p.kept(); ++side) {
        // The whole side first: taking text out can only lower the share of
        // the expected scripts when the other side holds this side's script
        // (a copy, which the copy stage judges), so a side that passes whole
        // passes, and only the others pay for their own text.
        if (passes(tables_[side].count(p.text[side]), 1)) continue;
        if (own_text(p.text[side], p.text[1 - side], own) < min_letters_) continue;
        if (!passes(tables_[side].count(own), min_letters_))
          batch.drop(p, index_, std::string("script:") + side_name(side));
      }
    }
  }

 private:
  bool passes(ScriptCount c, size_t min_letters) const {
    return c.letters < min_letters ||
           static_cast<double>(c.expected) >= min_ratio_ * static_cast<double>(c.letters);
  }
  int index_;
  ScriptTable tables_[2];
  double min_ratio_;
  size_t min_letters_;
};

}  // namespace

const StageKind& script_kind() {
  static const StageKind k{
      "script",
      "drops pairs whose letters are mostly in the wrong script (cheap language check)",
      StageRole::kFilter,
      {
          {"min_ratio", FieldType::kNumber, 0.5, "minimum fraction of a side's own letters in its expected scripts", 0, 1},
          {"min_letters", FieldType::kInt, int64_t{4}, "sides with fewer letters of their own are not judged", 0, 1e9},
          {"source_scripts", FieldType::kStringList, std::vector<std::string>{},
           "ISO 15924 codes for the source (empty: from source_lang)"},
          {"target_scripts", FieldType::kStringList, std::vector<std::string>{},
           "ISO 15924 codes for the target (empty: from target_lang)"},
      }};
  return k;
}

Result<std::unique_ptr<Stage>> make_script(const StageContext& ctx) {
  const Params& p = ctx.spec->params;
  std::vector<UScriptCode> codes[2];
  for (int side = 0; side < 2; ++side) {
    std::string key = std::string(side_name(side)) + "_scripts";
    std::vector<std::string> names = p.list(key);
    const std::string& lang = side == 0 ? ctx.pipeline->corpus.source_lang : ctx.pipeline->corpus.target_lang;
    if (names.empty()) names = scripts_for_language(lang);
    if (names.empty())
      return Error(ErrorKind::kPipeline,
                   "stage \"" + ctx.spec->name + "\": no scripts are known for " + side_name(side) + " language \"" +
                       lang + "\"; list them with " + key + " = [\"Latn\"] (ISO 15924 codes)",
                   ctx.spec->where);
    for (const auto& n : names) {
      int32_t v = u_getPropertyValueEnum(UCHAR_SCRIPT, n.c_str());
      if (v == UCHAR_INVALID_CODE || v == USCRIPT_COMMON || v == USCRIPT_INHERITED)
        return Error(ErrorKind::kPipeline,
                     "stage \"" + ctx.spec->name + "\": \"" + n + "\" in " + key +
                         " is not an ISO 15924 script code such as \"Latn\", \"Cyrl\" or \"Hani\"",
                     p.where(key).empty() ? ctx.spec->where : p.where(key));
      codes[side].push_back(static_cast<UScriptCode>(v));
    }
  }
  return std::unique_ptr<Stage>(
      std::make_unique<ScriptStage>(ctx, std::move(codes[0]), std::move(codes[1]), p.number("min_ratio"),
                                    p.integer("min_letters")));
}

}  // namespace sheaf
