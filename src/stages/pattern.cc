#include "stages/pattern.h"

#include <re2/filtered_re2.h>
#include <re2/re2.h>

#include <algorithm>
#include <atomic>

#include "core/text.h"
#include "stages/markup.h"

namespace sheaf {

namespace {

// True when `text` holds `atom` (ASCII, lowercase) in any ASCII case. The
// search runs memchr on the atom's first byte that is not a letter, or on
// both cases of its first letter. Also true once it has compared 8 bytes a
// byte of text (hostile text such as a long run of one letter against a long
// atom of it): the caller then runs the full search, so the answer stays
// exact and the cost linear.
bool holds_atom(std::string_view text, std::string_view atom) {
  auto lower = [](char c) { return static_cast<char>(c >= 'A' && c <= 'Z' ? c | 0x20 : c); };
  size_t budget = 8 * text.size() + 64;
  auto at = [&](size_t begin) {
    if (begin + atom.size() > text.size()) return false;
    for (size_t i = 0; i < atom.size(); ++i) {
      if (budget == 0) return true;
      --budget;
      if (lower(text[begin + i]) != atom[i]) return false;
    }
    return true;
  };
  auto scan = [&](char c, size_t k) {  // c sits at atom[k]
    for (size_t i = text.find(c, k); i != std::string_view::npos; i = text.find(c, i + 1))
      if (at(i - k)) return true;
    return false;
  };
  for (size_t k = 0; k < atom.size(); ++k)
    if (static_cast<unsigned char>((atom[k] | 0x20) - 'a') >= 26) return scan(atom[k], k);
  return scan(atom[0], 0) || scan(static_cast<char>(atom[0] & ~0x20), 0);
}

struct Rule {
  std::string name;
  std::unique_ptr<RE2> re;
  bool side[2];
  bool drop;
  std::string replacement;
  // RE2's prefilter of the pattern (re2/filtered_re2.h): the strings a text
  // must hold for the pattern to match at all. Most text holds no '@' or
  // "://", and looking for them costs a memchr where the full search costs
  // a pass of RE2's automaton. Off (null) when the pattern needs no string
  // or needs one with bytes outside ASCII (the prefilter lowercases those
  // in its own way): then every text is searched.
  std::unique_ptr<re2::FilteredRE2> filter;
  std::vector<std::string> atoms;
  bool folds = false;  // an atom holds 's' or 'k'

  bool may_match(std::string_view text) const {
    if (!filter) return true;
    // The prefilter reads U+017F and U+212A as 's' and 'k' (the only code
    // points it relates to ASCII: Pattern.PrefilterDropsExactlyWhatRe2Matches
    // in tests/unit/filters_test.cc asks RE2 about every one), which a byte
    // search would not see.
    if (folds && (text.find("\xC5\xBF") != std::string_view::npos || text.find("\xE2\x84\xAA") != std::string_view::npos))
      return true;
    thread_local std::vector<int> found, passed;
    found.clear();
    for (size_t i = 0; i < atoms.size(); ++i)
      if (holds_atom(text, atoms[i])) found.push_back(static_cast<int>(i));
    if (found.empty()) return false;  // a filtered pattern needs at least one of its strings
    filter->AllPotentials(found, &passed);
    return !passed.empty();
  }
  bool matches(std::string_view text) const {
    return may_match(text) && RE2::PartialMatch(re2::StringPiece(text.data(), text.size()), *re);
  }
};

// Counters of one rewrite (or of markup) per side: pairs whose side it changed.
struct SideCounts {
  std::atomic<uint64_t> n[2]{};
};

class PatternStage : public Stage {
 public:
  PatternStage(const StageContext& ctx, std::vector<Rule> rules, bool strip_markup)
      : index_(ctx.index), rules_(std::move(rules)), strip_markup_(strip_markup), rewritten_(rules_.size()) {}

  void map(PairBatch& batch) override {
    std::string buf;
    std::vector<uint64_t> rewritten(2 * rules_.size());
    uint64_t markup[2] = {0, 0}, entities[2] = {0, 0};
    for (Pair& p : batch.pairs) {
      if (!p.kept()) continue;
      if (strip_markup_ && !strip(batch, p, markup, entities)) continue;
      for (size_t k = 0; k < rules_.size() && p.kept(); ++k) {
        const Rule& r = rules_[k];
        for (int side = 0; side < 2 && p.kept(); ++side) {
          if (!r.side[side]) continue;
          std::string_view t = p.text[side];
          if (!r.matches(t)) continue;
          if (r.drop) {
            batch.drop(p, index_, r.name);
            break;
          }
          buf.assign(t);
          RE2::GlobalReplace(&buf, *r.re, r.replacement);
          collapse_spaces(buf);
          if (buf.empty()) {
            batch.drop(p, index_, std::string("emptied:") + side_name(side));
            break;
          }
          ++rewritten[2 * k + static_cast<size_t>(side)];
          p.set_text(side, batch.arena.copy(buf));
        }
      }
    }
    for (size_t k = 0; k < rules_.size(); ++k)
      for (int side = 0; side < 2; ++side)
        rewritten_[k].n[side].fetch_add(rewritten[2 * k + static_cast<size_t>(side)], std::memory_order_relaxed);
    for (int side = 0; side < 2; ++side) {
      markup_.n[side].fetch_add(markup[side], std::memory_order_relaxed);
      entities_.n[side].fetch_add(entities[side], std::memory_order_relaxed);
    }
  }

  bool rewrite(std::string& text, int side) const override {
    if (strip_markup_) {
      std::string out = remove_markup(text, find_markup(text));
      collapse_spaces(out);
      if (out.empty()) return false;
      text.swap(out);
    }
    for (const Rule& r : rules_) {
      if (!r.side[side]) continue;
      if (!r.matches(text)) continue;
      if (r.drop) return false;
      RE2::GlobalReplace(&text, *r.re, r.replacement);
      collapse_spaces(text);
      if (text.empty()) return false;
    }
    return true;
  }

  std::vector<std::pair<std::string, uint64_t>> counters() const override {
    std::vector<std::pair<std::string, uint64_t>> c;
    for (int side = 0; side < 2; ++side) {
      if (strip_markup_) {
        c.emplace_back(std::string("rewritten:markup:") + side_name(side), markup_.n[side].load());
        c.emplace_back(std::string("rewritten:entities:") + side_name(side), entities_.n[side].load());
      }
      for (size_t k = 0; k < rules_.size(); ++k)
        if (!rules_[k].drop)
          c.emplace_back("rewritten:" + rules_[k].name + ":" + side_name(side), rewritten_[k].n[side].load());
    }
    return c;
  }

 private:
  // Takes markup out of both sides alike: when both hold the same tags
  // (element and kind, in any order) they go from both; when the tags differ
  // the pair is dropped, since removing them could leave one side saying
  // what the other does not. Entities are decoded on each side. Returns
  // false when the pair was dropped.
  bool strip(PairBatch& batch, Pair& p, uint64_t markup[2], uint64_t entities[2]) const {
    bool any = false;
    for (int side = 0; side < 2; ++side)
      any |= p.text[side].find('<') != std::string_view::npos || p.text[side].find('&') != std::string_view::npos;
    if (!any) return true;
    std::vector<MarkupTag> tags[2] = {find_markup(p.text[0]), find_markup(p.text[1])};
    std::vector<std::string> keys[2];
    for (int side = 0; side < 2; ++side) {
      for (const auto& t : tags[side]) keys[side].push_back(t.key);
      std::sort(keys[side].begin(), keys[side].end());
    }
    if (keys[0] != keys[1]) {
      batch.drop(p, index_, "markup:unpaired");
      return false;
    }
    std::string out[2];
    size_t decoded[2] = {0, 0};
    for (int side = 0; side < 2; ++side) {
      if (tags[side].empty() && p.text[side].find('&') == std::string_view::npos) continue;
      out[side] = remove_markup(p.text[side], tags[side], &decoded[side]);
      collapse_spaces(out[side]);
      if (out[side].empty()) {
        batch.drop(p, index_, std::string("emptied:") + side_name(side));
        return false;
      }
    }
    for (int side = 0; side < 2; ++side) {
      if (tags[side].empty() && decoded[side] == 0) continue;
      markup[side] += !tags[side].empty();
      entities[side] += decoded[side] != 0;
      if (out[side] != p.text[side]) p.set_text(side, batch.arena.copy(out[side]));
    }
    return true;
  }

  int index_;
  std::vector<Rule> rules_;
  bool strip_markup_;
  std::vector<SideCounts> rewritten_;  // per rule
  SideCounts markup_, entities_;
};

const FieldList& rule_fields() {
  static const FieldList f = {
      {"name", FieldType::kString, std::string(""), "the rule's name; also the reason code of its drops"},
      {"pattern", FieldType::kString, std::string(""), "an RE2 pattern"},
      {"side", FieldType::kChoice, std::string("both"), "source, target or both", 0, 0, {"source", "target", "both"}},
      {"action", FieldType::kChoice, std::string("drop"), "drop the pair, or rewrite each match", 0, 0,
       {"drop", "rewrite"}},
      {"replacement", FieldType::kString, std::string(""), "rewrite: the text that replaces a match"},
  };
  return f;
}

}  // namespace

const StageKind& pattern_kind() {
  static const std::vector<Params> kDefaultRules = [] {
    auto rule = [](const char* name, const char* pattern, const char* action, const char* repl) {
      Params p;
      p.set("name", std::string(name), {});
      p.set("pattern", std::string(pattern), {});
      p.set("side", std::string("both"), {});
      p.set("action", std::string(action), {});
      p.set("replacement", std::string(repl), {});
      return p;
    };
    return std::vector<Params>{
        rule("email", "[A-Za-z0-9._%+-]+@[A-Za-z0-9-]+(\\.[A-Za-z0-9-]+)+", "drop", ""),
        rule("url", "(https?://|www\\.)\\S+", "drop", ""),
    };
  }();
  static const StageKind k{
      "pattern",
      "HTML markup out of both sides alike; RE2 rules that drop pairs or rewrite matches (URLs, e-mail addresses)",
      StageRole::kFilter,
      {
          {"markup", FieldType::kChoice, std::string("strip"),
           "strip: HTML tags out of both sides when both hold the same, else drop the pair; keep: leave them", 0, 0,
           {"strip", "keep"}},
          {"rules", FieldType::kTableList, kDefaultRules,
           "rules in order: { name, pattern, side = source|target|both, action = drop|rewrite, replacement }", 0, 0,
           {}, &rule_fields()},
      }};
  return k;
}

Result<std::unique_ptr<Stage>> make_pattern(const StageContext& ctx) {
  std::vector<Rule> rules;
  for (const Params& p : ctx.spec->params.tables("rules")) {
    Location where = p.where("pattern").empty() ? ctx.spec->where : p.where("pattern");
    Rule r;
    r.name = p.text("name");
    if (r.name.empty() || r.name.find_first_of(" \t:") != std::string::npos)
      return Error(ErrorKind::kPipeline,
                   "stage \"" + ctx.spec->name + "\": every rule needs a name without spaces or ':' (it is the reason code)",
                   where);
    RE2::Options opt;
    opt.set_log_errors(false);
    r.re = std::make_unique<RE2>(p.text("pattern"), opt);
    if (!r.re->ok())
      return Error(ErrorKind::kPipeline,
                   "stage \"" + ctx.spec->name + "\": rule \"" + r.name + "\": invalid pattern: " + r.re->error() +
                       (r.re->error_arg().empty() ? "" : " at \"" + r.re->error_arg() + "\""),
                   where);
    r.filter = std::make_unique<re2::FilteredRE2>(1);
    int id = 0;
    if (r.filter->Add(p.text("pattern"), opt, &id) == RE2::NoError) {
      r.filter->Compile(&r.atoms);
      bool ascii = true;
      for (const std::string& a : r.atoms)
        for (char c : a) ascii &= static_cast<unsigned char>(c) < 0x80;
      if (r.atoms.empty() || !ascii) r.filter.reset();
      for (const std::string& a : r.atoms) r.folds |= a.find_first_of("sk") != std::string::npos;
    } else {
      r.filter.reset();
    }
    const std::string& side = p.text("side");
    r.side[0] = side != "target";
    r.side[1] = side != "source";
    r.drop = p.text("action") == "drop";
    r.replacement = p.text("replacement");
    std::string why;
    if (!r.drop && !r.re->CheckRewriteString(r.replacement, &why))
      return Error(ErrorKind::kPipeline, "stage \"" + ctx.spec->name + "\": rule \"" + r.name + "\": " + why,
                   p.where("replacement").empty() ? where : p.where("replacement"));
    rules.push_back(std::move(r));
  }
  return std::unique_ptr<Stage>(
      std::make_unique<PatternStage>(ctx, std::move(rules), ctx.spec->params.text("markup") == "strip"));
}

}  // namespace sheaf
