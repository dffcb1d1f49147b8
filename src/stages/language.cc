#include "stages/language.h"

#include <cstdio>  // CLD2's public header needs it first
#include <cld2/public/compact_lang_det.h>
#include <cld2/public/encodings.h>
#include <unicode/uchar.h>
#include <unicode/utf8.h>

#include <unicode/uscript.h>
#include <unicode/ulocdata.h>
#include <unicode/uset.h>
#include <xxhash.h>

#include <algorithm>
#include <initializer_list>
#include <atomic>
#include <map>
#include <memory>
#include <mutex>
#include <vector>

#include "core/utf8.h"
#include "stages/own_text.h"
#include "stages/word_lists.h"

namespace sheaf {

namespace {

std::string primary(std::string_view code) { return std::string(code.substr(0, code.find_first_of("-_"))); }

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

std::vector<std::string> family_languages(std::string_view lang) {
  // Language families whose members share much vocabulary and spelling, so
  // that CLD2's n-grams often cannot place a short line of one among the
  // others (general linguistic grouping, from memory; no per-language
  // tuning): only the word test reads this list.
  static const std::vector<std::vector<std::string>> kFamilies = {
      {"es", "pt", "gl", "ca", "it", "fr", "ro", "oc"},  // Romance
      {"cs", "sk", "pl", "sl", "hr", "bs", "sr"},        // West and South Slavic, Latin script
      {"ru", "uk", "be", "bg", "mk", "sr"},              // East and South Slavic, Cyrillic script
      {"de", "nl", "af", "da", "no", "nb", "nn", "sv", "is", "fo"},  // Germanic
      {"id", "ms"},
  };
  std::string l = primary(lang);
  std::vector<std::string> out;
  for (const auto& f : kFamilies)
    if (std::find(f.begin(), f.end(), l) != f.end())
      for (const auto& m : f)
        if (m != l && std::find(out.begin(), out.end(), m) == out.end()) out.push_back(m);
  return out;
}

LanguageGuess identify_language(std::string_view text, std::string_view hint) {
  CLD2::CLDHints hints{nullptr, nullptr, CLD2::UNKNOWN_ENCODING, CLD2::UNKNOWN_LANGUAGE};
  if (!hint.empty()) hints.language_hint = CLD2::GetLanguageFromName(std::string(hint).c_str());
  CLD2::Language lang3[3];
  int percent3[3];
  double score3[3];
  int text_bytes = 0;
  bool reliable = false;
  CLD2::ExtDetectLanguageSummary(text.data(), static_cast<int>(text.size()), true, &hints, 0, lang3, percent3, score3,
                                 nullptr, &text_bytes, &reliable);
  LanguageGuess g;
  for (int k = 0; k < 3; ++k) {
    g.code[k] = CLD2::LanguageCode(lang3[k]);
    g.percent[k] = percent3[k];
  }
  g.reliable = reliable;
  return g;
}

bool cld2_knows(std::string_view code) {
  std::string c(code);
  return CLD2::GetLanguageFromName(c.c_str()) != CLD2::UNKNOWN_LANGUAGE ||
         CLD2::GetLanguageFromName(primary(code).c_str()) != CLD2::UNKNOWN_LANGUAGE;
}

std::string language_key(std::string_view code) {
  std::string c(code);
  CLD2::Language l = CLD2::GetLanguageFromName(c.c_str());
  if (l == CLD2::UNKNOWN_LANGUAGE) l = CLD2::GetLanguageFromName(primary(code).c_str());
  return l == CLD2::UNKNOWN_LANGUAGE ? primary(code) : primary(CLD2::LanguageCode(l));
}

namespace {

// Scripts that, among the languages CLD2 knows, only one language is written
// in (CLD2 itself detects these languages by script alone, see
// kCLDFlagScoreAsQuads in compact_lang_det.h). A side whose own letters are
// all in such a script of its own language needs no identification.
const char* sole_language_of_script(UScriptCode s) {
  switch (s) {
    case USCRIPT_THAI: return "th";
    case USCRIPT_GREEK: return "el";
    case USCRIPT_HANGUL: return "ko";
    case USCRIPT_HIRAGANA: case USCRIPT_KATAKANA: return "ja";
    case USCRIPT_GEORGIAN: return "ka";
    case USCRIPT_ARMENIAN: return "hy";
    case USCRIPT_KHMER: return "km";
    case USCRIPT_LAO: return "lo";
    case USCRIPT_SINHALA: return "si";
    case USCRIPT_TAMIL: return "ta";
    case USCRIPT_TELUGU: return "te";
    case USCRIPT_KANNADA: return "kn";
    case USCRIPT_MALAYALAM: return "ml";
    case USCRIPT_GUJARATI: return "gu";
    case USCRIPT_GURMUKHI: return "pa";
    case USCRIPT_ORIYA: return "or";
    case USCRIPT_MYANMAR: return "my";
    case USCRIPT_THAANA: return "dv";
    default: return nullptr;
  }
}

// True when every letter of `own` is in a script whose sole language is
// `key` (kana and Han together count for Japanese only when kana appear).
bool settled_by_script(std::string_view own, const std::string& key) {
  bool any = false;
  Utf8Cursor u(own);
  while (!u.done()) {
    if (u.byte() < 0x80) {
      if (static_cast<unsigned>((u.take() | 0x20) - 'a') < 26u) return false;
      continue;
    }
    UChar32 c = u.next();
    if (c < 0 || !(U_GET_GC_MASK(c) & U_GC_L_MASK)) continue;
    UErrorCode st = U_ZERO_ERROR;
    const char* sole = sole_language_of_script(uscript_getScript(c, &st));
    if (!sole || key != sole) return false;
    any = true;
  }
  return any;
}


// The standard exemplar characters of a language (CLDR, through ICU's
// ulocdata_getExemplarSet): the letters its everyday orthography uses.
// Frozen sets are safe to query from many threads; each language's set is
// built once, on first use (only drop candidates need one).
struct USetCloser {
  void operator()(USet* s) const { uset_close(s); }
};

const USet* exemplars(const std::string& code) {
  static std::mutex mu;
  // Owned here and closed when the process ends (a set is never freed
  // while the process runs, since any thread may be reading it).
  static std::map<std::string, std::unique_ptr<USet, USetCloser>> sets;
  std::lock_guard<std::mutex> lock(mu);
  auto it = sets.find(code);
  if (it != sets.end()) return it->second.get();
  UErrorCode st = U_ZERO_ERROR;
  ULocaleData* d = ulocdata_open(code.c_str(), &st);
  USet* set = nullptr;
  if (U_SUCCESS(st)) {
    set = ulocdata_getExemplarSet(d, nullptr, 0, ULOCDATA_ES_STANDARD, &st);
    if (U_FAILURE(st) || st == U_USING_DEFAULT_WARNING) {
      if (set) uset_close(set);
      set = nullptr;
    } else {
      uset_freeze(set);
    }
  }
  if (d) ulocdata_close(d);
  sets[code].reset(set);  // nullptr: no data, no evidence either way
  return set;
}

// What the letters of `text` say between the side's language (exemplars
// `own`) and the language CLD2 found (`found`): letters only `found` uses,
// and letters only `own` uses (lowercased; letters in neither or both say
// nothing).
struct LetterEvidence {
  size_t for_found = 0, for_own = 0;
};
LetterEvidence letter_evidence(std::string_view text, const USet* own, const USet* found) {
  LetterEvidence e;
  if (!own || !found) return e;
  Utf8Cursor u(text);
  while (!u.done()) {
    UChar32 c = u.next();
    if (c < 0 || !(U_GET_GC_MASK(c) & U_GC_L_MASK)) continue;
    c = u_tolower(c);
    bool a = uset_contains(own, c), b = uset_contains(found, c);
    e.for_found += !a && b;
    e.for_own += a && !b;
  }
  return e;
}

// Bytes of a side's own text CLD2 is given.
constexpr size_t kMaxBytes = 160;

class LanguageStage : public Stage {
 public:
  LanguageStage(const StageContext& ctx, int64_t min_letters, int64_t min_share, std::vector<std::string> accept[2],
                std::string lang[2], std::string dictionaries)
      : index_(ctx.index),
        min_letters_(static_cast<size_t>(min_letters)),
        min_share_(static_cast<int>(min_share)),
        dir_(std::move(dictionaries)) {
    for (int s = 0; s < 2; ++s) {
      accept_[s] = std::move(accept[s]);
      lang_[s] = std::move(lang[s]);
      key_[s] = language_key(lang_[s]);
    }
    // The dictionaries this stage reads: each side's language's, then its
    // close relatives' and family's (its rivals).
    for (int s = 0; s < 2; ++s) own_list_[s] = add_list(lang_[s]);
    for (int s = 0; s < 2; ++s) {
      if (own_list_[s] < 0) continue;
      std::vector<std::string> rivals = related_languages(lang_[s]);
      for (const auto& f : family_languages(lang_[s])) rivals.push_back(f);
      for (const auto& r : rivals) {
        int i = accepted(s, language_key(r)) ? -1 : add_list(r);
        if (i >= 0 && i != own_list_[s]) rivals_[s] |= 1u << i;
      }
    }
  }
  void map(PairBatch& batch) override {
    load_word_lists(lists_);  // after the first batches: a few atomic reads
    std::string owns[2];
    size_t letters[2];
    uint64_t judged[2] = {0, 0}, settled[2] = {0, 0}, few[2] = {0, 0}, rechecked[2] = {0, 0}, worded[2] = {0, 0},
             by_words[2] = {0, 0};
    for (Pair& p : batch.pairs) {
      if (!p.kept()) continue;
      own_texts(p.text[0], p.text[1], owns, letters);
      for (int side = 0; side < 2 && p.kept(); ++side) {
        std::string& own = owns[side];
        if (letters[side] < min_letters_) {
          ++few[side];
          continue;
        }
        if (settled_by_script(own, key_[side])) {
          ++settled[side];
          continue;
        }
        // The words first: a side whose words are its language's, and some
        // of them no close relative's, is settled without asking CLD2.
        if (settled_by_words(side, own)) {
          ++by_words[side];
          continue;
        }
        ++judged[side];
        // A sentence's language shows in its first words: CLD2 reads at most
        // kMaxBytes of the own text (cut at a space), as its cost grows
        // with the length.
        if (own.size() > kMaxBytes) {
          size_t cut = own.rfind(' ', kMaxBytes);
          own.resize(cut == std::string::npos || cut == 0 ? kMaxBytes : cut);
          // Back to a character start (core/utf8.h's rules by lead byte: the
          // own text is cut, not decoded, and a lead byte left without its
          // continuation bytes goes too).
          while (!own.empty() && utf8_continuation(static_cast<uint8_t>(own.back()))) own.pop_back();
          if (!own.empty() && utf8_lead_length(static_cast<uint8_t>(own.back())) > 1) own.pop_back();
        }
        // The same own text on the same side gets the same verdict: a
        // per-thread table remembers recent ones, so text that comes again
        // (a source with several translations) is not asked about twice.
        uint64_t h = XXH3_64bits_withSeed(own.data(), own.size(), id_ * 2 + static_cast<uint64_t>(side)) | 1;
        CachedVerdict& slot = cache()[h & (kCacheSlots - 1)];
        if (slot.key != h) {
          Asked asked;
          slot.key = h;
          slot.code = verdict(side, own, asked);
          slot.rechecked = asked.again;
          slot.worded = asked.words;
        }
        // Counted whether or not the table answered, so that the counters
        // do not depend on how batches fall to threads.
        rechecked[side] += slot.rechecked;
        worded[side] += slot.worded;
        if (slot.code.empty()) continue;
        batch.drop(p, index_, std::string("language:") + side_name(side) + "=" + slot.code);
      }
    }
    for (int s = 0; s < 2; ++s) {
      judged_[s].fetch_add(judged[s], std::memory_order_relaxed);
      settled_[s].fetch_add(settled[s], std::memory_order_relaxed);
      few_[s].fetch_add(few[s], std::memory_order_relaxed);
      rechecked_[s].fetch_add(rechecked[s], std::memory_order_relaxed);
      worded_[s].fetch_add(worded[s], std::memory_order_relaxed);
      by_words_[s].fetch_add(by_words[s], std::memory_order_relaxed);
    }
  }

  std::vector<std::pair<std::string, uint64_t>> counters() const override {
    std::vector<std::pair<std::string, uint64_t>> c;
    for (int s = 0; s < 2; ++s) {
      c.emplace_back(std::string("judged:") + side_name(s), judged_[s].load());
      c.emplace_back(std::string("settled-by-script:") + side_name(s), settled_[s].load());
      c.emplace_back(std::string("too-few-letters:") + side_name(s), few_[s].load());
      c.emplace_back(std::string("rechecked:") + side_name(s), rechecked_[s].load());
      c.emplace_back(std::string("words-decided:") + side_name(s), worded_[s].load());
      c.emplace_back(std::string("settled-by-words:") + side_name(s), by_words_[s].load());
    }
    return c;
  }

 private:
  struct CachedVerdict {
    uint64_t key = 0;
    std::string code;        // the language found, empty: keep
    bool rechecked = false;  // the verdict needed a second question
    bool worded = false;     // the dictionaries decided it
  };
  static constexpr size_t kCacheSlots = 4096;
  static std::vector<CachedVerdict>& cache() {
    thread_local std::vector<CachedVerdict> c(kCacheSlots);
    return c;
  }

  // What went into a verdict beyond CLD2's first answer (for the counters).
  struct Asked {
    bool again = false;  // a second, hinted question
    bool words = false;  // the dictionaries settled it
  };

  // What the words of a side's own text say between the side's language and
  // `found` (a CLD2 code), when both have a spelling dictionary: kFound when
  // words only `found` spells outnumber those only the side's language
  // spells more than twice (and there is at least one; with `strict`, at
  // least two and none of the side's language's), kOwn in the mirror case,
  // kNothing otherwise. Words both spell, or neither (names, terms, other
  // languages), say nothing. A rule of thumb (common practice, no published
  // source), the same for every language; docs/quality.md measures it.
  enum class Words { kNothing, kOwn, kFound };
  Words words_say(int side, const std::string& own, const std::string& found, size_t strict,
                  size_t* only_found = nullptr) const {
    int mine = own_list_[side], theirs = list_of(found);
    if (mine < 0 || theirs < 0 || theirs == mine) return Words::kNothing;
    size_t only_mine = 0, only_theirs = 0, theirs_lacks = 0;
    uint32_t a = 1u << mine, b = 1u << theirs;
    auto words = dictionary_words(own, kMaxWords);
    for (std::string_view w : words) {
      if (strict) {
        // Without CLD2's support the other language must hold most of the
        // words: asked first, and given up once it cannot.
        if (word_cache().accepted(lists_, id_, w, b) == 0) {
          if (++theirs_lacks * 2 >= words.size()) return Words::kNothing;
          continue;
        }
      }
      uint32_t m = word_cache().accepted(lists_, id_, w, a | b);
      only_mine += m == a;
      only_theirs += m == b;
    }
    if (only_found) *only_found = only_theirs;
    if (strict ? only_theirs >= strict && only_mine == 0 : only_theirs > 2 * only_mine) return Words::kFound;
    if (only_mine > 2 * only_theirs) return Words::kOwn;
    return Words::kNothing;
  }

  // True when the side's words settle its language (a cheaper first test
  // than CLD2, which costs about 10 us a question however short the text):
  // at least kSettleWords words, at most one in kMissingShare missing from
  // the language's dictionary, and against each rival (a close relative's
  // or a family member's dictionary: es against pt, gl, ca, it, fr, ...) at
  // least two words the language's dictionary holds and the rival's lacks,
  // more than twice as many as the other way round (the words test of the
  // verdict, below). Without rivals' dictionaries any two of its words do:
  // a side language whose relatives are not installed is settled by its own
  // dictionary, the price of falling back cleanly (docs/pipeline.md). Rules
  // of thumb (common practice, no published source), the same for every
  // language.
  bool settled_by_words(int side, const std::string& own) const {
    int mine = own_list_[side];
    if (mine < 0) return false;
    auto words = dictionary_words(own, kMaxWords);
    if (words.size() < kSettleWords) return false;
    uint32_t a = 1u << mine, rivals = rivals_[side];
    size_t missing = 0, own_words = 0;
    uint8_t mine_only[32] = {}, theirs_only[32] = {};  // per rival
    WordCache& cache = word_cache();
    // The side's own dictionary first, so that text of no language it
    // knows (names, codes, other scripts' transliterations) costs a few
    // lookups, not one per word and rival (a lookup that fails costs
    // Hunspell 1-30 us).
    for (std::string_view w : words) {
      if (cache.accepted(lists_, id_, w, a) != 0) {
        ++own_words;
      } else if (++missing * kMissingShare > words.size()) {
        return false;
      }
    }
    for (std::string_view w : words) {
      if (rivals == 0) break;
      uint32_t m = cache.accepted(lists_, id_, w, a | rivals);
      bool own = m & a;
      for (uint32_t b = rivals; b != 0; b &= b - 1) {
        int i = __builtin_ctz(b);
        bool theirs = m & (1u << i);
        mine_only[i] += own && !theirs;
        theirs_only[i] += theirs && !own;
      }
    }
    if (own_words < 2) return false;
    for (uint32_t b = rivals; b != 0; b &= b - 1) {
      int i = __builtin_ctz(b);
      if (mine_only[i] < 2 || mine_only[i] <= 2 * theirs_only[i]) return false;
    }
    return true;
  }

  int add_list(const std::string& code) {
    const SpellingDictionary* w = find_word_list(dir_, code);
    if (w == nullptr) return -1;
    for (size_t i = 0; i < lists_.size(); ++i)
      if (lists_[i] == w) return static_cast<int>(i);
    if (lists_.size() >= 32) return -1;
    lists_.push_back(w);
    list_keys_.push_back(language_key(code));
    return static_cast<int>(lists_.size() - 1);
  }
  // The dictionary of a CLD2 code among those this stage reads, or -1.
  int list_of(const std::string& code) const {
    std::string k = language_key(code);
    for (size_t i = 0; i < list_keys_.size(); ++i)
      if (list_keys_[i] == k) return static_cast<int>(i);
    return -1;
  }
  static WordCache& word_cache() {
    thread_local WordCache c;
    return c;
  }
  static constexpr size_t kMaxWords = 16;
  static constexpr size_t kSettleWords = 3;
  static constexpr size_t kMissingShare = 10;

  // CLD2's verdict on a side's own text: the code of the other language it
  // confidently finds, or empty to keep the pair.
  std::string verdict(int side, const std::string& own, Asked& asked) const {
    LanguageGuess g = identify_language(own);
    if (!g.reliable || g.code[0] == "un") {
      // CLD2 cannot place the text. Told which language to expect, it
      // favours that one; a confident answer for another language even so
      // is a verdict (and needs no second hinted question).
      asked.again = true;
      LanguageGuess h = identify_language(own, lang_[side]);
      std::string found = language_key(h.code[0]);
      if (h.reliable && found != "un" && !accepted(side, found) && h.percent[0] >= min_share_) {
        LetterEvidence e = letter_evidence(own, exemplars(key_[side]), exemplars(found));
        if (!(e.for_own > 0 && e.for_found == 0)) return h.code[0];
      }
      // Nor can it with the hint: the words may still tell. The candidates
      // are the languages CLD2 named in either answer and the side's close
      // relatives; without CLD2's support the words must be plain (strict).
      return words_verdict(side, own, {&g, &h}, 2, asked);
    }
    if (g.percent[0] < min_share_) return {};
    std::string top = language_key(g.code[0]);
    if (top == "un" || accepted(side, top)) return {};
    int accepted_share = 0;
    for (int k = 1; k < 3; ++k)
      if (g.code[k] != "un" && accepted(side, language_key(g.code[k]))) accepted_share += g.percent[k];
    if (accepted_share > 100 - min_share_) return {};
    // CLD2 tells closely related languages apart poorly on short text,
    // and answers English for text it cannot place (compact_lang_det.h).
    // So the letters have a say: letters only the found language writes
    // confirm the verdict, letters only the side's language writes
    // overturn it. When they say nothing (or both), the words decide if
    // both languages have a dictionary; else CLD2 is asked again, told
    // which language to expect, and the verdict must stand.
    LetterEvidence e = letter_evidence(own, exemplars(key_[side]), exemplars(top));
    if (e.for_own > 0 && e.for_found == 0) return {};
    if (!(e.for_found > 0 && e.for_own == 0)) {
      Words w = words_say(side, own, g.code[0], 0);
      if (w != Words::kNothing) {
        asked.words = true;
        return w == Words::kFound ? g.code[0] : std::string();
      }
      // The words neither back nor deny CLD2's language (it answers English
      // for text it cannot place): CLD2 has reliably said "not the side's
      // language", so one plain word of a family language is enough.
      std::string other = words_verdict(side, own, {&g}, 1, asked);
      if (!other.empty()) return other;
      asked.again = true;
      LanguageGuess h = identify_language(own, lang_[side]);
      if (!h.reliable || language_key(h.code[0]) != top || h.percent[0] < min_share_) return {};
    }
    return g.code[0];
  }

  // The strict word test against each candidate language (CLD2's answers'
  // languages, then the side's close relatives), in that order; the first
  // the words plainly favour is the verdict.
  std::string words_verdict(int side, const std::string& own, std::initializer_list<const LanguageGuess*> guesses,
                            size_t min_only, Asked& asked) const {
    if (own_list_[side] < 0) return {};
    std::vector<std::string> cands;
    auto add = [&](const std::string& code) {
      std::string k = language_key(code);
      if (k == "un" || k.empty() || accepted(side, k)) return;
      if (std::find(cands.begin(), cands.end(), code) == cands.end()) cands.push_back(code);
    };
    for (const LanguageGuess* g : guesses)
      for (int k = 0; k < 3; ++k) add(g->code[k]);
    for (const auto& r : related_languages(lang_[side])) add(r);
    for (const auto& r : family_languages(lang_[side])) add(r);
    std::string best;
    size_t best_only = 0;
    for (const auto& c : cands) {
      size_t only = 0;
      if (words_say(side, own, c, min_only, &only) == Words::kFound && only > best_only) {
        best = c;
        best_only = only;
      }
    }
    asked.words = !best.empty();
    return best;
  }

  bool accepted(int side, const std::string& key) const {
    return std::find(accept_[side].begin(), accept_[side].end(), key) != accept_[side].end();
  }
  int index_;
  size_t min_letters_;
  int min_share_;
  std::vector<std::string> accept_[2];  // language keys accepted per side
  std::string lang_[2], key_[2];
  std::string dir_;                        // spelling dictionaries ("" none)
  std::vector<const SpellingDictionary*> lists_;     // the dictionaries read (bit i: lists_[i])
  std::vector<std::string> list_keys_;     // their language keys
  int own_list_[2] = {-1, -1};             // each side's language's, or -1
  uint32_t rivals_[2] = {0, 0};            // each side's relatives' and family's
  std::atomic<uint64_t> judged_[2]{}, settled_[2]{}, few_[2]{}, rechecked_[2]{}, worded_[2]{}, by_words_[2]{};
  // Tells this stage's cached verdicts from another's (each stage object
  // has its own, so two stages or two runs in one process never share).
  uint64_t id_ = next_id();
  static uint64_t next_id() {
    static std::atomic<uint64_t> n{1};
    return n.fetch_add(1);
  }
};

}  // namespace

const StageKind& language_kind() {
  static const StageKind k{
      "language",
      "language identification with CLD2 (the slowest filter: keep it late)",
      StageRole::kFilter,
      {
          {"min_letters", FieldType::kInt, int64_t{20}, "sides with fewer letters of their own are not judged", 0, 1e9},
          {"min_share", FieldType::kInt, int64_t{60},
           "percent of a side's own text CLD2 must give to another language to drop the pair", 1, 100},
          {"accept_related", FieldType::kBool, false,
           "also accept close relatives (es: gl, ca, pt; see docs); off: they count as other languages"},
          {"source_accept", FieldType::kStringList, std::vector<std::string>{},
           "further language codes accepted on the source side"},
          {"target_accept", FieldType::kStringList, std::vector<std::string>{},
           "further language codes accepted on the target side"},
          {"dictionaries", FieldType::kString, std::string("/usr/share/hunspell"),
           "directory of spelling dictionaries (LL_CC.aff/.dic) for a word-level second opinion; \"\": none"},
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
    accept[side].push_back(language_key(lang));
    if (p.flag("accept_related"))
      for (const auto& r : related_languages(lang)) accept[side].push_back(language_key(r));
    for (const auto& a : p.list(side == 0 ? "source_accept" : "target_accept")) accept[side].push_back(language_key(a));
  }
  std::string langs[2] = {ctx.pipeline->corpus.source_lang, ctx.pipeline->corpus.target_lang};
  return std::unique_ptr<Stage>(std::make_unique<LanguageStage>(ctx, p.integer("min_letters"), p.integer("min_share"),
                                                                accept, langs, p.text("dictionaries")));
}

}  // namespace sheaf
