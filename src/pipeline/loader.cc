// Loading a pipeline file: TOML -> Pipeline, with every check done up front.
#include <toml++/toml.h>

#include <algorithm>
#include <charconv>
#include <filesystem>
#include <map>
#include <set>
#include <sstream>

#include "pipeline/pipeline.h"
#include "run/step.h"
#include "stages/registry.h"

namespace sheaf {

namespace {

struct Ctx {
  std::string file;
  // Values that came from --set, with the "--set NAME.KEY" that gave them:
  // an error in one points there, not at a line of the file.
  std::map<const toml::node*, std::string> overridden;
  // Copies of values (a [corpus.stages.NAME] key merged into its stage's
  // table) with the place the original was written; a copy has none.
  mutable std::map<const toml::node*, Location> copied;
  Location at(const toml::source_region& r) const {
    return Location{file, r.begin.line, r.begin.column, {}};
  }
  Location at(const toml::node& n) const {
    if (auto it = overridden.find(&n); it != overridden.end()) return Location{it->second, 0, 0, {}};
    if (auto it = copied.find(&n); it != copied.end()) return it->second;
    if (!n.source().path) return Location{"--set", 0, 0, {}};  // inside a value given with --set
    return n.source().begin ? at(n.source()) : Location{file, 0, 0, {}};
  }
};

// A number as people write it: integers without a decimal point or an
// exponent (261, 4294967295), others in the shortest exact decimal form.
std::string number_text(double v) {
  char buf[400];
  auto r = std::to_chars(buf, buf + sizeof buf, v, std::chars_format::fixed);
  return r.ec == std::errc() ? std::string(buf, r.ptr) : std::to_string(v);
}

Error pipeline_error(std::string msg, Location where) {
  return Error(ErrorKind::kPipeline, std::move(msg), std::move(where));
}

std::string type_word(FieldType t) {
  switch (t) {
    case FieldType::kBool: return "true or false";
    case FieldType::kInt: return "an integer";
    case FieldType::kNumber: return "a number";
    case FieldType::kString: return "a string";
    case FieldType::kChoice: return "a string";
    case FieldType::kStringList: return "an array of strings";
    case FieldType::kIntList: return "an array of integers";
    case FieldType::kFractionOrCount: return "a fraction (0.01) or a count of pairs (2000)";
    case FieldType::kTableList: return "an array of tables";
  }
  return "a value";
}

std::string range_text(const FieldSpec& f) {
  std::ostringstream s;
  bool lo = f.min != -std::numeric_limits<double>::infinity();
  bool hi = f.max != std::numeric_limits<double>::infinity();
  if (lo && hi) s << "from " << number_text(f.min) << " to " << number_text(f.max);
  else if (lo) s << "at least " << number_text(f.min);
  else if (hi) s << "at most " << number_text(f.max);
  return s.str();
}

Result<Params> check_table(const toml::table& t, const FieldList& fields, const Ctx& ctx, const std::string& what,
                           const std::set<std::string>& extra_keys = {});

Result<Value> check_value(const toml::node& n, const FieldSpec& f, const Ctx& ctx, const std::string& what) {
  auto bad_type = [&]() {
    return pipeline_error(what + "." + f.key + " must be " + type_word(f.type), ctx.at(n));
  };
  // Written so that NaN, which compares false with everything, is out of range.
  auto in_range = [&](double v, const std::string& text) -> Status {
    if (!(v >= f.min && v <= f.max))
      return pipeline_error(what + "." + f.key + " must be " + range_text(f) + ", not " + text, ctx.at(n));
    return {};
  };
  switch (f.type) {
    case FieldType::kBool:
      if (!n.is_boolean()) return bad_type();
      return Value(n.as_boolean()->get());
    case FieldType::kInt: {
      if (!n.is_integer()) return bad_type();
      int64_t v = n.as_integer()->get();
      if (auto st = in_range(static_cast<double>(v), std::to_string(v)); !st) return st.error();
      return Value(v);
    }
    case FieldType::kNumber: {
      double v;
      if (n.is_integer()) v = static_cast<double>(n.as_integer()->get());
      else if (n.is_floating_point()) v = n.as_floating_point()->get();
      else return bad_type();
      if (auto st = in_range(v, number_text(v)); !st) return st.error();
      return Value(v);
    }
    case FieldType::kFractionOrCount: {
      if (n.is_integer()) {
        int64_t v = n.as_integer()->get();
        if (v < 0) return pipeline_error(what + "." + f.key + " must not be negative", ctx.at(n));
        return Value(v);
      }
      if (n.is_floating_point()) {
        double v = n.as_floating_point()->get();
        if (!(v >= 0.0 && v < 1.0))
          return pipeline_error(what + "." + f.key + " is a fraction and must be at least 0 and below 1, not " +
                                    number_text(v) + " (write a whole number for a count of pairs)",
                                ctx.at(n));
        return Value(v);
      }
      return bad_type();
    }
    case FieldType::kString:
      if (!n.is_string()) return bad_type();
      return Value(std::string(n.as_string()->get()));
    case FieldType::kChoice: {
      if (!n.is_string()) return bad_type();
      std::string v(n.as_string()->get());
      for (const auto& c : f.choices)
        if (c == v) return Value(v);
      std::string all;
      for (const auto& c : f.choices) all += (all.empty() ? "" : ", ") + ("\"" + c + "\"");
      std::string hint = closest_name(v, f.choices);
      return pipeline_error(what + "." + f.key + " is \"" + v + "\"; it must be one of " + all +
                                (hint.empty() ? "" : " (did you mean \"" + hint + "\"?)"),
                            ctx.at(n));
    }
    case FieldType::kStringList: {
      const toml::array* a = n.as_array();
      if (a == nullptr) return bad_type();
      std::vector<std::string> out;
      for (const auto& e : *a) {
        if (!e.is_string()) return pipeline_error(what + "." + f.key + " must hold only strings", ctx.at(e));
        out.emplace_back(e.as_string()->get());
      }
      return Value(std::move(out));
    }
    case FieldType::kIntList: {
      const toml::array* a = n.as_array();
      if (a == nullptr) return bad_type();
      std::vector<int64_t> out;
      for (const auto& e : *a) {
        if (!e.is_integer()) return pipeline_error(what + "." + f.key + " must hold only integers", ctx.at(e));
        int64_t v = e.as_integer()->get();
        if (!(static_cast<double>(v) >= f.min && static_cast<double>(v) <= f.max))
          return pipeline_error(what + "." + f.key + " values must be " + range_text(f) + ", not " + std::to_string(v),
                                ctx.at(e));
        out.push_back(v);
      }
      return Value(std::move(out));
    }
    case FieldType::kTableList: {
      const toml::array* a = n.as_array();
      if (a == nullptr) return bad_type();
      std::vector<Params> out;
      for (size_t i = 0; i < a->size(); ++i) {
        const toml::table* t = (*a)[i].as_table();
        if (t == nullptr) return pipeline_error(what + "." + f.key + " must hold only tables", ctx.at((*a)[i]));
        auto p = check_table(*t, *f.sub, ctx, what + "." + f.key + "[" + std::to_string(i) + "]");
        if (!p.ok()) return p.error();
        out.push_back(std::move(p.value()));
      }
      return Value(std::move(out));
    }
  }
  return bad_type();
}

Result<Params> check_table(const toml::table& t, const FieldList& fields, const Ctx& ctx, const std::string& what,
                           const std::set<std::string>& extra_keys) {
  std::vector<std::string> names;
  for (const auto& f : fields) names.push_back(f.key);
  for (auto&& [k, v] : t) {
    std::string key(k.str());
    if (extra_keys.count(key)) continue;
    bool known = false;
    for (const auto& f : fields) known |= f.key == key;
    if (!known) {
      std::string hint = closest_name(key, names);
      Location where = k.source().begin ? ctx.at(k.source()) : ctx.at(v);
      return pipeline_error("unknown key \"" + key + "\" in " + what +
                                (hint.empty() ? "" : " (did you mean \"" + hint + "\"?)"),
                            where);
    }
  }
  Params out;
  for (const auto& f : fields) {
    const toml::node* n = t.get(f.key);
    if (n == nullptr) {
      out.set(f.key, f.fallback, {});
      continue;
    }
    auto v = check_value(*n, f, ctx, what);
    if (!v.ok()) return v.error();
    out.set(f.key, std::move(v.value()), ctx.at(*n));
  }
  return out;
}

Status apply_override(toml::table& root, const Override& o, Ctx& ctx) {
  std::string label = "--set " + o.target + "." + o.key;
  toml::table parsed;
  try {
    parsed = toml::parse("v = " + o.toml_value);
  } catch (const toml::parse_error& e) {
    return pipeline_error("\"" + o.toml_value +
                              "\" is not a TOML value (quote strings: " + o.key + "='\"text\"')",
                          Location{label, 0, 0, {}});
  }
  toml::node* value = parsed.get("v");
  if (toml::array* named = root["corpus"].as_array()) {
    // Named corpora: "corpus" sets the key in every corpus, a corpus's name
    // in that corpus only.
    bool hit = false;
    for (auto& e : *named) {
      toml::table* t = e.as_table();
      if (t == nullptr) continue;
      const toml::node* n = t->get("name");
      bool named_here = n && n->is_string() && n->as_string()->get() == o.target;
      if (o.target == "corpus" || named_here) {
        t->insert_or_assign(o.key, *value);
        hit = true;
      }
    }
    if (hit) return {};
  }
  if (o.target == "corpus" || o.target == "output") {
    toml::table* sec = root[o.target].as_table();
    if (sec == nullptr) {
      root.insert(o.target, toml::table{});
      sec = root[o.target].as_table();
    }
    auto placed = sec->insert_or_assign(o.key, *value);
    ctx.overridden[&placed.first->second] = label;
    return {};
  }
  toml::array* stages = root["stage"].as_array();
  std::vector<std::string> names;
  if (stages != nullptr) {
    for (auto& s : *stages) {
      toml::table* t = s.as_table();
      if (t == nullptr) continue;
      std::string name = t->get("name") && t->get("name")->is_string() ? std::string(t->get("name")->as_string()->get())
                         : t->get("kind") && t->get("kind")->is_string() ? std::string(t->get("kind")->as_string()->get())
                                                                          : "";
      names.push_back(name);
      if (name == o.target) {
        auto placed = t->insert_or_assign(o.key, *value);
        ctx.overridden[&placed.first->second] = label;
        return {};
      }
    }
  }
  names.push_back("corpus");
  names.push_back("output");
  std::string hint = closest_name(o.target, names);
  return pipeline_error("\"" + o.target + "\" is not a stage of this pipeline, nor corpus or output" +
                            (hint.empty() ? "" : " (did you mean \"" + hint + "\"?)"),
                        Location{label, 0, 0, {}});
}

// The [corpus] keys (of a [corpus] table or one [[corpus]]) as a CorpusSpec.
Result<CorpusSpec> corpus_from(const Params& c, const std::string& what, const std::string& file) {
  CorpusSpec spec;
  const std::string& layout = c.text("layout");
  spec.layout = layout == "aligned" ? Layout::kAligned : layout == "jsonl" ? Layout::kJsonl : Layout::kTsv;
  spec.files = c.list("files");
  size_t want = spec.layout == Layout::kAligned ? 2 : 1;
  if (spec.files.size() != want) {
    Location where = c.where("files").empty() ? Location{file, 0, 0, {}} : c.where("files");
    return pipeline_error(what + ".files must name " +
                              (want == 2 ? "two line-aligned files (source, then target) for layout \"aligned\""
                                         : "exactly one file for layout \"" + layout + "\"") +
                              "; it names " + std::to_string(spec.files.size()),
                          where);
  }
  spec.source_lang = c.text("source_lang");
  spec.target_lang = c.text("target_lang");
  spec.source_field = c.text("source_field");
  spec.target_field = c.text("target_field");
  spec.max_line_bytes = static_cast<uint64_t>(c.integer("max_line_bytes"));
  spec.params = c;
  return spec;
}

bool valid_name(const std::string& n) {
  if (n.empty()) return false;
  for (char ch : n)
    if (!(std::isalnum(static_cast<unsigned char>(ch)) || ch == '-' || ch == '_')) return false;
  return true;
}

// [[corpus]] tables: several named corpora, in priority order.
Status load_named_corpora(const toml::array& arr, const Ctx& ctx, Pipeline& p) {
  p.named_corpora = true;
  int stdin_users = 0;
  for (size_t i = 0; i < arr.size(); ++i) {
    const toml::table* t = arr[i].as_table();
    if (t == nullptr) return pipeline_error("each corpus must be a table: write it as [[corpus]]", ctx.at(arr[i]));
    std::string what = "[[corpus]] " + std::to_string(i + 1);
    auto params = check_table(*t, named_corpus_fields(), ctx, what, {"stages"});
    if (!params.ok()) return params.error();
    const Params& c = params.value();
    const std::string& n = c.text("name");
    Location at = c.where("name").empty() ? ctx.at(*t) : c.where("name");
    if (!valid_name(n))
      return pipeline_error(what + " needs name = \"...\" of letters, digits, '-' and '_'", at);
    for (const auto& other : p.corpora)
      if (other.name == n) return pipeline_error("two corpora are named \"" + n + "\"", at);
    if (n == "corpus" || n == "output" || n == "read")
      return pipeline_error("corpus name \"" + n + "\" is reserved; choose another", at);
    auto spec = corpus_from(c, "[[corpus]] \"" + n + "\"", ctx.file);
    if (!spec.ok()) return spec.error();
    CorpusSpec& cs = spec.value();
    cs.name = n;
    cs.held_out = c.flag("held_out");
    cs.weight = c.number("weight");
    cs.skip = c.list("skip");
    cs.where = ctx.at(*t);
    for (const auto& f : cs.files) stdin_users += f == "-";
    // One language pair: a later corpus may leave the languages out.
    if (!p.corpora.empty()) {
      const CorpusSpec& first = p.corpora.front();
      for (int side = 0; side < 2; ++side) {
        std::string& mine = side == 0 ? cs.source_lang : cs.target_lang;
        const std::string& theirs = side == 0 ? first.source_lang : first.target_lang;
        const char* key = side == 0 ? "source_lang" : "target_lang";
        if (mine.empty()) mine = theirs;
        if (mine != theirs)
          return pipeline_error("corpus \"" + n + "\" has " + key + " \"" + mine + "\" but \"" + first.name +
                                    "\" has \"" + theirs + "\"; every corpus of a run shares one language pair",
                                c.where(key).empty() ? at : c.where(key));
      }
    }
    p.corpora.push_back(std::move(cs));
  }
  if (p.corpora.empty()) return pipeline_error("[[corpus]] lists no corpus", Location{ctx.file, 0, 0, {}});
  if (stdin_users > 1)
    return pipeline_error("only one corpus file can be standard input (\"-\")", p.corpora.front().where);
  bool any_held_out = false;
  for (const auto& cs : p.corpora) any_held_out |= cs.held_out;
  if (!any_held_out)
    return pipeline_error("no corpus has held_out = true, so dev and test could take no pair", p.corpora.front().where);
  p.corpus = p.corpora.front();
  p.corpus_params = p.corpus.params;
  return {};
}

// skip = [...] and [corpus.stages.NAME] tables, checked against the stages.
Status resolve_corpus_stages(const toml::array& arr, const toml::array* stages, const Ctx& ctx, Pipeline& p) {
  std::vector<std::string> names;
  for (const auto& s : p.stages) names.push_back(s.name);
  auto filter_stage = [&](const std::string& corpus, const std::string& stage, const Location& at,
                          const char* how) -> Result<int> {
    int i = p.stage_index(stage);
    if (i < 0) {
      std::string hint = closest_name(stage, names);
      return pipeline_error("corpus \"" + corpus + "\" " + how + " \"" + stage + "\", which is not a stage of this pipeline" +
                                (hint.empty() ? "" : " (did you mean \"" + hint + "\"?)"),
                            at);
    }
    const StageSpec& s = p.stages[static_cast<size_t>(i)];
    if (s.kind->role != StageRole::kFilter || !s.kind->varies_per_corpus)
      return pipeline_error("corpus \"" + corpus + "\" " + how + " \"" + stage +
                                "\": only filter stages other than dedup and near-dup can differ per corpus "
                                "(deduplication compares every corpus with the same keys)",
                            at);
    return i;
  };
  for (auto& c : p.corpora) {
    for (const auto& s : c.skip) {
      auto i = filter_stage(c.name, s, c.params.where("skip"), "skips");
      if (!i.ok()) return i.error();
    }
    for (const auto& node : arr) {
      const toml::table* t = node.as_table();
      if (t == nullptr || !t->get("name") || !t->get("name")->is_string() || t->get("name")->as_string()->get() != c.name)
        continue;
      const toml::node* sn = t->get("stages");
      if (sn == nullptr) continue;
      const toml::table* st = sn->as_table();
      if (st == nullptr)
        return pipeline_error("corpus \"" + c.name + "\": stages must be a table of stage names, e.g. [corpus.stages.length]",
                              ctx.at(*sn));
      for (auto&& [k, v] : *st) {
        std::string stage(k.str());
        Location at = k.source().begin ? ctx.at(k.source()) : ctx.at(v);
        auto i = filter_stage(c.name, stage, at, "sets keys of");
        if (!i.ok()) return i.error();
        const toml::table* keys = v.as_table();
        if (keys == nullptr)
          return pipeline_error("corpus \"" + c.name + "\": stages." + stage + " must be a table of keys", at);
        // The stage's own table with this corpus's keys on top, checked
        // like any stage.
        toml::table merged = *(*stages)[static_cast<size_t>(*i)].as_table();
        for (auto&& [kk, vv] : *keys) {
          std::string key(kk.str());
          if (key == "kind" || key == "name")
            return pipeline_error("corpus \"" + c.name + "\": stages." + stage + " cannot change " + key, ctx.at(vv));
          auto placed = merged.insert_or_assign(key, vv);
          ctx.copied[&placed.first->second] = ctx.at(vv);
        }
        const StageSpec& spec = p.stages[static_cast<size_t>(*i)];
        auto params = check_table(merged, spec.kind->fields, ctx, "corpus \"" + c.name + "\" stages." + stage, {"kind", "name"});
        ctx.copied.clear();  // `merged` goes: its nodes' addresses may be reused
        if (!params.ok()) return params.error();
        c.stage_params.emplace_back(stage, std::move(params.value()));
      }
    }
  }
  for (const auto& c : p.corpora)
    for (const auto& s : p.stages)
      if (c.name == s.name)
        return pipeline_error("corpus \"" + c.name + "\" has the name of a stage; --set could not tell them apart", c.where);
  p.corpus = p.corpora.front();
  return {};
}

// Streaming stages come first (filters, then at most one split); a step
// may come only after stages that provide every product it needs, and a
// product is provided once. Decided from the kinds' declarations alone.
Status check_order(const Pipeline& p) {
  static const char* order = "filters (normalize, length, ...), then split, then the steps (vocabulary, shards)";
  int phase = 0;  // 0 filters, 1 split, 2 steps
  std::map<std::string, std::string> provided = {{std::string(kSplitsProduct), "pass 1"},
                                                  {std::string(kPass1Product), "pass 1"}};
  for (const auto& s : p.stages) {
    const StageKind& k = *s.kind;
    int want = k.role == StageRole::kFilter ? 0 : k.role == StageRole::kSplit ? 1 : 2;
    if (want < phase)
      return pipeline_error("stage \"" + s.name + "\" (" + k.kind + ") is out of order: stages run as " + order, s.where);
    if (want == 1 && phase == 1) return pipeline_error("only one " + k.kind + " stage is allowed", s.where);
    phase = want;
    for (const auto& need : k.needs) {
      if (provided.count(need)) continue;
      std::string by;
      for (const StageKind* other : stage_kinds())
        if (std::find(other->provides.begin(), other->provides.end(), need) != other->provides.end()) by = other->kind;
      return pipeline_error("stage \"" + s.name + "\" (" + k.kind + ") needs the " + need +
                                (by.empty() ? ", which no stage provides" : ", which a " + by + " stage before it provides"),
                            s.where);
    }
    for (const auto& made : k.provides) {
      auto [it, fresh] = provided.emplace(made, s.name);
      if (!fresh)
        return pipeline_error("only one " + k.kind + " stage is allowed: stage \"" + it->second + "\" already provides the " + made,
                              s.where);
    }
  }
  return {};
}

Result<Pipeline> build(toml::table& root, const std::string& name, const std::vector<Override>& overrides) {
  Ctx ctx{name};
  for (const auto& o : overrides) SHEAF_TRY(apply_override(root, o, ctx));

  Pipeline p;
  p.path = name;
  std::filesystem::path fp(name);
  p.base_dir = fp.has_parent_path() ? fp.parent_path().string() : ".";

  static const std::vector<std::string> kTop = {"sheaf", "corpus", "output", "stage"};
  for (auto&& [k, v] : root) {
    std::string key(k.str());
    if (std::find(kTop.begin(), kTop.end(), key) == kTop.end()) {
      std::string hint = closest_name(key, kTop);
      return pipeline_error("unknown top-level key \"" + key + "\"" + (hint.empty() ? "" : " (did you mean \"" + hint + "\"?)"),
                            k.source().begin ? ctx.at(k.source()) : ctx.at(v));
    }
  }
  const toml::node* version = root.get("sheaf");
  if (version == nullptr)
    return pipeline_error("missing \"sheaf = " + std::to_string(kPipelineFormat) +
                              "\" at the top (the pipeline format version)", Location{name, 1, 1, {}});
  if (!version->is_integer() || version->as_integer()->get() != kPipelineFormat)
    return pipeline_error("this sheaf reads pipeline format " + std::to_string(kPipelineFormat) +
                              "; write sheaf = " + std::to_string(kPipelineFormat), ctx.at(*version));

  auto section = [&](const char* key, const FieldList& fields, Params& out) -> Status {
    const toml::node* n = root.get(key);
    toml::table empty;
    const toml::table* t = &empty;
    if (n != nullptr) {
      t = n->as_table();
      if (t == nullptr) return pipeline_error(std::string("[") + key + "] must be a table", ctx.at(*n));
    }
    auto r = check_table(*t, fields, ctx, std::string("[") + key + "]");
    if (!r.ok()) return r.error();
    out = std::move(r.value());
    return {};
  };
  const toml::array* named = root.get("corpus") ? root.get("corpus")->as_array() : nullptr;
  if (named == nullptr) {
    SHEAF_TRY(section("corpus", corpus_fields(), p.corpus_params));
    auto spec = corpus_from(p.corpus_params, "[corpus]", name);
    if (!spec.ok()) return spec.error();
    p.corpus = std::move(spec.value());
    p.corpora = {p.corpus};
  } else {
    SHEAF_TRY(load_named_corpora(*named, ctx, p));
  }
  SHEAF_TRY(section("output", output_fields(), p.output_params));
  p.output_dir = p.output_params.text("dir");

  const toml::node* sn = root.get("stage");
  if (sn != nullptr) {
    const toml::array* arr = sn->as_array();
    if (arr == nullptr) return pipeline_error("\"stage\" must be an array of tables: write each as [[stage]]", ctx.at(*sn));
    std::vector<std::string> kinds;
    for (const StageKind* k : stage_kinds()) kinds.push_back(k->kind);
    std::string kinds_text;
    for (const auto& k : kinds) kinds_text += (kinds_text.empty() ? "" : ", ") + k;
    for (size_t i = 0; i < arr->size(); ++i) {
      const toml::table* t = (*arr)[i].as_table();
      if (t == nullptr) return pipeline_error("each stage must be a table: write it as [[stage]]", ctx.at((*arr)[i]));
      const toml::node* kn = t->get("kind");
      if (kn == nullptr || !kn->is_string())
        return pipeline_error("stage " + std::to_string(i + 1) + " needs kind = \"...\" (one of " + kinds_text + ")",
                              ctx.at(*t));
      std::string kind(kn->as_string()->get());
      const StageKind* sk = find_stage_kind(kind);
      if (sk == nullptr) {
        std::string hint = closest_name(kind, kinds);
        return pipeline_error("unknown stage kind \"" + kind + "\"" +
                                  (hint.empty() ? "; the kinds are " + kinds_text : " (did you mean \"" + hint + "\"?)"),
                              ctx.at(*kn));
      }
      StageSpec spec;
      spec.kind = sk;
      spec.where = ctx.at(*t);
      spec.name = kind;
      if (const toml::node* nn = t->get("name")) {
        if (!nn->is_string() || nn->as_string()->get().empty())
          return pipeline_error("a stage's name must be a non-empty string", ctx.at(*nn));
        spec.name = std::string(nn->as_string()->get());
        for (char ch : spec.name)
          if (!(std::isalnum(static_cast<unsigned char>(ch)) || ch == '-' || ch == '_'))
            return pipeline_error("stage name \"" + spec.name + "\" may hold only letters, digits, '-' and '_'",
                                  ctx.at(*nn));
        if (spec.name == "read" || spec.name == "output" || spec.name == "corpus")
          return pipeline_error("stage name \"" + spec.name + "\" is reserved; choose another", ctx.at(*nn));
      }
      for (const auto& other : p.stages)
        if (other.name == spec.name)
          return pipeline_error("two stages are named \"" + spec.name + "\"; give one of them name = \"...\"",
                                ctx.at(*t));
      auto params = check_table(*t, sk->fields, ctx, "stage \"" + spec.name + "\"", {"kind", "name"});
      if (!params.ok()) return params.error();
      spec.params = std::move(params.value());
      p.stages.push_back(std::move(spec));
    }
  }

  if (named != nullptr) SHEAF_TRY(resolve_corpus_stages(*named, sn ? sn->as_array() : nullptr, ctx, p));

  // Order: filters, then at most one split, then steps, each after the
  // stages that provide what it needs (pass 1 provides the split files).
  SHEAF_TRY(check_order(p));
  return p;
}

}  // namespace

Result<Override> parse_override(const std::string& text) {
  auto eq = text.find('=');
  auto dot = text.find('.');
  if (eq == std::string::npos || dot == std::string::npos || dot > eq || dot == 0 || dot + 1 == eq)
    return Error(ErrorKind::kUsage, "--set takes NAME.KEY=VALUE (a stage name or corpus/output, a key, a TOML value), not \"" + text + "\"");
  return Override{text.substr(0, dot), text.substr(dot + 1, eq - dot - 1), text.substr(eq + 1)};
}

Result<Pipeline> load_pipeline_text(const std::string& text, const std::string& name,
                                    const std::vector<Override>& overrides) {
  toml::table root;
  try {
    root = toml::parse(text, name);
  } catch (const toml::parse_error& e) {
    return pipeline_error("not valid TOML: " + std::string(e.description()),
                          Location{name, e.source().begin.line, e.source().begin.column, {}});
  }
  return build(root, name, overrides);
}

Result<Pipeline> load_pipeline(const std::string& path, const std::vector<Override>& overrides) {
  std::error_code ec;
  if (!std::filesystem::is_regular_file(path, ec))
    return Error(ErrorKind::kPipeline, "cannot read the pipeline file; check the path", Location{path, 0, 0, {}});
  toml::table root;
  try {
    root = toml::parse_file(path);
  } catch (const toml::parse_error& e) {
    return pipeline_error("not valid TOML: " + std::string(e.description()),
                          Location{path, e.source().begin.line, e.source().begin.column, {}});
  }
  return build(root, path, overrides);
}

}  // namespace sheaf
