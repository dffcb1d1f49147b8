#include "stages/normalize.h"

#include <unicode/bytestream.h>
#include <unicode/casemap.h>
#include <unicode/normalizer2.h>
#include <unicode/uchar.h>
#include <unicode/unorm2.h>
#include <unicode/utf8.h>

#include <cstring>
#include <vector>

#include "core/text.h"
#include "core/utf8.h"

namespace sheaf {

namespace {

const char* kForms[] = {"none", "nfc", "nfkc"};

NormalForm parse_form(const std::string& s) {
  return s == "nfkc" ? NormalForm::kNfkc : s == "none" ? NormalForm::kNone : NormalForm::kNfc;
}

// Format characters that carry meaning and are kept.
bool keep_format(UChar32 c) {
  return c == 0x200C || c == 0x200D || (c >= 0x0600 && c <= 0x0605) || c == 0x06DD || c == 0x070F || c == 0x08E2 ||
         c == 0x110BD || c == 0x110CD || (c >= 0xE0020 && c <= 0xE007F);
}

enum class CharClass { kKeep, kSpace, kRemove };

CharClass classify(UChar32 c, bool strip) {
  if (u_isUWhiteSpace(c)) return CharClass::kSpace;
  if (!strip) return CharClass::kKeep;
  int8_t t = u_charType(c);
  if (t == U_CONTROL_CHAR) return CharClass::kRemove;
  if (t == U_FORMAT_CHAR && !keep_format(c)) return CharClass::kRemove;
  return CharClass::kKeep;
}

// classify() for the BMP, computed once, so that the scan of text that needs
// no change is table lookups only. Bits 0-1: the CharClass; bit 2 (bit 3):
// the character is NFC (NFKC) quick-check "yes" and has combining class 0,
// so a text made only of such characters is already in that form.
constexpr uint8_t kNfcSafe = 4, kNfkcSafe = 8;
const uint8_t* class_table() {
  static const std::vector<uint8_t> t = [] {
    std::vector<uint8_t> v(0x10000);
    for (UChar32 c = 0; c < 0x10000; ++c) {
      uint8_t k = static_cast<uint8_t>(classify(c, true));
      if (u_getCombiningClass(c) == 0) {
        if (u_getIntPropertyValue(c, UCHAR_NFC_QUICK_CHECK) == UNORM_YES) k |= kNfcSafe;
        if (u_getIntPropertyValue(c, UCHAR_NFKC_QUICK_CHECK) == UNORM_YES) k |= kNfkcSafe;
      }
      v[static_cast<size_t>(c)] = k;
    }
    return v;
  }();
  return t.data();
}

// True when valid UTF-8 `in` needs no cleaning: no character to remove, no
// space other than single ASCII spaces inside. Sets *valid, and *safe to the
// kNfcSafe/kNfkcSafe bits that hold for every character.
bool already_clean(std::string_view in, bool strip, bool* valid, uint8_t* safe) {
  const uint8_t* table = class_table();
  Utf8Cursor u(in);
  bool clean = !in.empty() && in.front() != ' ' && in.back() != ' ';
  bool prev_space = false;
  *valid = true;
  *safe = kNfcSafe | kNfkcSafe;
  while (!u.done()) {
    // Up to eight ASCII bytes at a time (core/utf8.h's ascii_run) when they
    // hold no control, no DEL and no two spaces in a row.
    AsciiRun w;
    if (u.ascii_run(w) && w.ascii > 0) {
      uint64_t bad = (ascii_bytes_below(w.word, 0x20) | bytes_equal(w.word, 0x7F)) & w.mask;  // controls, DEL
      uint64_t sp = bytes_equal(w.word, ' ') & w.mask;
      if (bad == 0 && (sp & (sp >> 8)) == 0 && !(prev_space && (sp & 0x80))) {
        prev_space = (sp >> (8 * w.ascii - 1)) & 1;
        u.skip(static_cast<size_t>(w.ascii));
        continue;
      }
    }
    UChar32 c;
    if (u.byte() < 0x80) {
      c = u.take();
    } else {
      c = u.next();
      if (c < 0) {
        *valid = false;
        return false;
      }
    }
    CharClass k;
    if (c < 0x10000) {
      k = static_cast<CharClass>(table[c] & 3);
      *safe &= table[c];
    } else {
      k = classify(c, true);
      *safe = 0;
    }
    if (!strip && k == CharClass::kRemove) k = CharClass::kKeep;
    if (k == CharClass::kSpace) {
      if (c != ' ' || prev_space) clean = false;
      prev_space = true;
    } else {
      if (k == CharClass::kRemove) clean = false;
      prev_space = false;
    }
  }
  return clean || in.empty();
}

// ASCII needs no normalization; only controls, spaces and case matter.
// Returns true when `in` is already clean.
bool ascii_clean(std::string_view in, bool casefold) {
  if (in.empty()) return true;
  if (in.front() == ' ' || in.back() == ' ') return false;
  if (!casefold) {
    // Eight bytes at a time: no control byte, no DEL, no two spaces in a row.
    const char* p = in.data();
    size_t n = in.size(), i = 0;
    // The same exact tests as already_clean (core/text.h): a space before
    // '!' is not two spaces.
    uint64_t prev_space = 0;
    for (; i + 8 <= n; i += 8) {
      uint64_t w;
      std::memcpy(&w, p + i, 8);
      if ((ascii_bytes_below(w, 0x20) | bytes_equal(w, 0x7F)) != 0) return false;
      uint64_t sp = bytes_equal(w, ' ');
      if ((sp & (sp >> 8)) != 0 || (prev_space && (sp & 0x80))) return false;
      prev_space = sp >> 63;
    }
    char prev = prev_space ? ' ' : 0;
    for (; i < n; ++i) {
      unsigned char c = static_cast<unsigned char>(p[i]);
      if (c < 0x20 || c == 0x7F || (c == ' ' && prev == ' ')) return false;
      prev = static_cast<char>(c);
    }
    return true;
  }
  char prev = 0;
  for (char ch : in) {
    unsigned char c = static_cast<unsigned char>(ch);
    if (c < 0x20 || c == 0x7F) return false;
    if (c == ' ' && prev == ' ') return false;
    if (casefold && c >= 'A' && c <= 'Z') return false;
    prev = ch;
  }
  return true;
}

void ascii_rewrite(std::string_view in, bool strip, bool casefold, std::string& out) {
  out.clear();
  for (char ch : in) {
    unsigned char c = static_cast<unsigned char>(ch);
    if (c >= 0x09 && c <= 0x0D) {
      out += ' ';  // White_Space controls (PropList.txt) become spaces
    } else if (c < 0x20 || c == 0x7F) {
      if (!strip) out += ch;
    } else {
      out += (casefold && c >= 'A' && c <= 'Z') ? static_cast<char>(c + 32) : ch;
    }
  }
  collapse_spaces(out);
}

// Steps 2 and 3 on valid UTF-8. Returns true if anything changed.
bool clean(std::string_view in, bool strip, std::string& out) {
  out.clear();
  Utf8Cursor u(in);
  bool changed = false, space = true;
  while (!u.done()) {
    size_t start = u.pos();
    UChar32 c = u.next();
    switch (classify(c, strip)) {
      case CharClass::kSpace:
        if (c != ' ' || space) changed = true;
        if (!space) out += ' ';
        space = true;
        break;
      case CharClass::kRemove:
        changed = true;
        break;
      case CharClass::kKeep:
        out.append(in.data() + start, u.pos() - start);
        space = false;
        break;
    }
  }
  if (!out.empty() && out.back() == ' ') {
    out.pop_back();
    changed = true;
  }
  return changed;
}

struct Punct {
  UChar32 from;
  const char* to;
};
// Small, deliberate table: typographic quotes and dashes only.
const Punct kPunct[] = {
    {0x2018, "'"},  {0x2019, "'"},  {0x201A, "'"},  {0x201B, "'"},  {0x2032, "'"}, {0x201C, "\""},
    {0x201D, "\""}, {0x201E, "\""}, {0x201F, "\""}, {0x2033, "\""}, {0x2010, "-"}, {0x2011, "-"},
    {0x2012, "-"},  {0x2013, "-"},  {0x2014, "-"},  {0x2015, "-"},  {0x2212, "-"},
};

bool unify_punct(std::string_view in, std::string& out) {
  out.clear();
  Utf8Cursor u(in);
  bool changed = false;
  while (!u.done()) {
    size_t start = u.pos();
    UChar32 c = u.next();
    const char* to = nullptr;
    if (c >= 0x2010 && c <= 0x2212)
      for (const auto& e : kPunct)
        if (e.from == c) to = e.to;
    if (to) {
      out += to;
      changed = true;
    } else {
      out.append(in.data() + start, u.pos() - start);
    }
  }
  return changed;
}

const icu::Normalizer2* normalizer(NormalForm f) {
  UErrorCode st = U_ZERO_ERROR;
  if (f == NormalForm::kNfc) return icu::Normalizer2::getNFCInstance(st);
  if (f == NormalForm::kNfkc) return icu::Normalizer2::getNFKCInstance(st);
  return nullptr;
}

}  // namespace

TextNormalizer::TextNormalizer(const NormalizeOptions& o) : o_(o) {}

TextNormalizer::Outcome TextNormalizer::apply(std::string_view in, int side, std::string& out, size_t* repairs) const {
  if (is_ascii(in)) {
    if (ascii_clean(in, o_.casefold)) return Outcome::kUnchanged;
    ascii_rewrite(in, o_.strip_controls, o_.casefold, out);
    return Outcome::kRewritten;
  }
  // The common case: valid, clean, already normalized: one scan, no copy.
  bool valid = true;
  uint8_t safe = 0;
  if (already_clean(in, o_.strip_controls, &valid, &safe) && !o_.casefold && !o_.punctuation[side]) {
    NormalForm f = o_.form[side];
    if (f == NormalForm::kNone || (f == NormalForm::kNfc && (safe & kNfcSafe)) ||
        (f == NormalForm::kNfkc && (safe & kNfkcSafe)))
      return Outcome::kUnchanged;
    const icu::Normalizer2* norm = normalizer(f);
    UErrorCode st = U_ZERO_ERROR;
    if (norm->isNormalizedUTF8(icu::StringPiece(in.data(), static_cast<int32_t>(in.size())), st))
      return Outcome::kUnchanged;
  }
  std::string cur;
  bool changed = false;
  if (!valid) {
    if (!o_.repair_utf8) return Outcome::kInvalidUtf8;
    size_t r = repair_utf8(in, cur);
    if (repairs) *repairs += r;
    changed = true;
  } else {
    cur.assign(in);
  }
  std::string tmp;
  if (clean(cur, o_.strip_controls, tmp)) {
    cur.swap(tmp);
    changed = true;
  }
  UErrorCode st = U_ZERO_ERROR;
  if (o_.casefold) {
    tmp.clear();
    icu::StringByteSink<std::string> sink(&tmp);
    icu::CaseMap::utf8Fold(0, icu::StringPiece(cur.data(), static_cast<int32_t>(cur.size())), sink, nullptr, st);
    if (U_SUCCESS(st) && tmp != cur) {
      cur.swap(tmp);
      changed = true;
    }
  }
  if (const icu::Normalizer2* norm = normalizer(o_.form[side])) {
    icu::StringPiece sp(cur.data(), static_cast<int32_t>(cur.size()));
    st = U_ZERO_ERROR;
    if (!norm->isNormalizedUTF8(sp, st) && U_SUCCESS(st)) {
      tmp.clear();
      icu::StringByteSink<std::string> sink(&tmp);
      norm->normalizeUTF8(0, sp, sink, nullptr, st);
      cur.swap(tmp);
      changed = true;
      // Normalization can create spaces (NFKC of U+00A8 is SPACE + U+0308)
      // and removing a control can bring a base and a mark together.
      for (int round = 0; round < 2 && clean(cur, o_.strip_controls, tmp); ++round) {
        cur.swap(tmp);
        sp = icu::StringPiece(cur.data(), static_cast<int32_t>(cur.size()));
        st = U_ZERO_ERROR;
        if (norm->isNormalizedUTF8(sp, st)) break;
        tmp.clear();
        icu::StringByteSink<std::string> sink2(&tmp);
        norm->normalizeUTF8(0, sp, sink2, nullptr, st);
        cur.swap(tmp);
      }
    }
  }
  if (o_.punctuation[side] && unify_punct(cur, tmp)) {
    cur.swap(tmp);
    collapse_spaces(cur);
    changed = true;
  }
  if (!changed) return Outcome::kUnchanged;
  out.swap(cur);
  return Outcome::kRewritten;
}

namespace {

class NormalizeStage : public Stage {
 public:
  NormalizeStage(const StageContext& ctx, const NormalizeOptions& o) : index_(ctx.index), norm_(o) {}

  void map(PairBatch& batch) override {
    std::string out;
    uint64_t changed[2] = {0, 0};
    for (Pair& p : batch.pairs) {
      if (!p.kept()) continue;
      for (int side = 0; side < 2 && p.kept(); ++side) {
        size_t repairs = 0;
        switch (norm_.apply(p.text[side], side, out, &repairs)) {
          case TextNormalizer::Outcome::kUnchanged:
            break;
          case TextNormalizer::Outcome::kRewritten:
            // kRewritten can hand back the same bytes (the slow path ran but
            // found nothing to change): only a real change is counted.
            if (out != p.text[side]) ++changed[side];
            p.set_text(side, batch.arena.copy(out));
            break;
          case TextNormalizer::Outcome::kInvalidUtf8:
            batch.drop(p, index_, std::string("invalid-utf8:") + side_name(side));
            break;
        }
        if (repairs) repaired_.fetch_add(repairs, std::memory_order_relaxed);
      }
    }
    for (int side = 0; side < 2; ++side) changed_[side].fetch_add(changed[side], std::memory_order_relaxed);
  }

  bool rewrite(std::string& text, int side) const override {
    std::string out;
    auto r = norm_.apply(text, side, out, nullptr);
    if (r == TextNormalizer::Outcome::kInvalidUtf8) return false;
    if (r == TextNormalizer::Outcome::kRewritten) text.swap(out);
    return true;
  }

  std::vector<std::pair<std::string, uint64_t>> counters() const override {
    return {{"repaired_utf8", repaired_.load()},
            {"changed:source", changed_[0].load()},
            {"changed:target", changed_[1].load()}};
  }

 private:
  int index_;
  TextNormalizer norm_;
  std::atomic<uint64_t> repaired_{0};
  std::atomic<uint64_t> changed_[2]{};  // pairs whose side the stage changed
};

}  // namespace

NormalizeOptions normalize_options(const Params& p) {
  NormalizeOptions o;
  o.form[kSource] = parse_form(p.text("source_form"));
  o.form[kTarget] = parse_form(p.text("target_form"));
  o.repair_utf8 = p.text("invalid_utf8") == "replace";
  o.strip_controls = p.flag("strip_controls");
  o.casefold = p.flag("casefold");
  const std::string& pu = p.text("punctuation");
  o.punctuation[kSource] = pu == "both" || pu == "source";
  o.punctuation[kTarget] = pu == "both" || pu == "target";
  return o;
}

const StageKind& normalize_kind() {
  static const StageKind k{
      "normalize",
      "Unicode normalization, invisible-character removal, one space between words",
      StageRole::kFilter,
      {
          {"source_form",
           FieldType::kChoice,
           std::string("nfc"),
           "normalization form of the source: nfc, nfkc or none",
           0,
           0,
           {kForms[0], kForms[1], kForms[2]}},
          {"target_form",
           FieldType::kChoice,
           std::string("nfc"),
           "normalization form of the target: nfc, nfkc or none",
           0,
           0,
           {kForms[0], kForms[1], kForms[2]}},
          {"invalid_utf8",
           FieldType::kChoice,
           std::string("drop"),
           "\"drop\" the pair, or \"replace\" each bad sequence with U+FFFD",
           0,
           0,
           {"drop", "replace"}},
          {"strip_controls", FieldType::kBool, true, "remove control and invisible format characters (keeps ZWJ/ZWNJ)"},
          {"casefold", FieldType::kBool, false, "apply Unicode case folding to both sides"},
          {"punctuation",
           FieldType::kChoice,
           std::string("off"),
           "straighten curly quotes and dashes: off, both, source or target",
           0,
           0,
           {"off", "both", "source", "target"}},
      }};
  return k;
}

Result<std::unique_ptr<Stage>> make_normalize(const StageContext& ctx) {
  return std::unique_ptr<Stage>(std::make_unique<NormalizeStage>(ctx, normalize_options(ctx.spec->params)));
}

}  // namespace sheaf
