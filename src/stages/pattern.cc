#include "stages/pattern.h"

#include <re2/re2.h>

#include "core/text.h"

namespace sheaf {

namespace {

struct Rule {
  std::string name;
  std::unique_ptr<RE2> re;
  bool side[2];
  bool drop;
  std::string replacement;
};

class PatternStage : public Stage {
 public:
  PatternStage(const StageContext& ctx, std::vector<Rule> rules) : index_(ctx.index), rules_(std::move(rules)) {}

  void map(PairBatch& batch) override {
    std::string buf;
    for (Pair& p : batch.pairs) {
      for (const Rule& r : rules_) {
        if (!p.kept()) break;
        for (int side = 0; side < 2 && p.kept(); ++side) {
          if (!r.side[side]) continue;
          std::string_view t = p.text[side];
          if (!RE2::PartialMatch(re2::StringPiece(t.data(), t.size()), *r.re)) continue;
          if (r.drop) {
            batch.drop(p, index_, r.name);
            break;
          }
          buf.assign(t);
          RE2::GlobalReplace(&buf, *r.re, r.replacement);
          collapse_spaces(buf);
          p.set_text(side, batch.arena.copy(buf));
        }
      }
    }
  }

  bool rewrite(std::string& text, int side) const override {
    for (const Rule& r : rules_) {
      if (!r.side[side]) continue;
      if (!RE2::PartialMatch(text, *r.re)) continue;
      if (r.drop) return false;
      RE2::GlobalReplace(&text, *r.re, r.replacement);
      collapse_spaces(text);
    }
    return true;
  }

 private:
  int index_;
  std::vector<Rule> rules_;
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
      p.set("name", std::string(name), {}, false);
      p.set("pattern", std::string(pattern), {}, false);
      p.set("side", std::string("both"), {}, false);
      p.set("action", std::string(action), {}, false);
      p.set("replacement", std::string(repl), {}, false);
      return p;
    };
    return std::vector<Params>{
        rule("html-tag", "</?[A-Za-z][^<>]{0,200}>", "rewrite", " "),
        rule("html-entity", "&(nbsp|#160|#xA0);", "rewrite", " "),
        rule("email", "[A-Za-z0-9._%+-]+@[A-Za-z0-9-]+(\\.[A-Za-z0-9-]+)+", "drop", ""),
        rule("url", "(https?://|www\\.)\\S+", "drop", ""),
    };
  }();
  static const StageKind k{
      "pattern",
      "RE2 rules that drop pairs or rewrite matches (markup, URLs, e-mail addresses)",
      StageRole::kFilter,
      {
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
  return std::unique_ptr<Stage>(std::make_unique<PatternStage>(ctx, std::move(rules)));
}

}  // namespace sheaf
