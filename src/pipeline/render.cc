// Writing a Pipeline back as TOML: `sheaf validate`'s resolved output and
// `sheaf init`'s commented template.
#include <charconv>
#include <filesystem>
#include <sstream>

#include "pipeline/pipeline.h"

namespace sheaf {

namespace {

std::string toml_string(std::string_view s) {
  std::string out = "\"";
  for (unsigned char c : s) {
    switch (c) {
      case '"': out += "\\\""; break;
      case '\\': out += "\\\\"; break;
      case '\n': out += "\\n"; break;
      case '\t': out += "\\t"; break;
      case '\r': out += "\\r"; break;
      default:
        if (c < 0x20 || c == 0x7F) {
          char buf[8];
          std::snprintf(buf, sizeof buf, "\\u%04X", c);
          out += buf;
        } else {
          out += static_cast<char>(c);
        }
    }
  }
  return out + "\"";
}

std::string toml_number(double d) {
  char buf[64];
  auto r = std::to_chars(buf, buf + sizeof buf, d);
  std::string s(buf, r.ptr);
  if (s.find_first_of(".eEn") == std::string::npos) s += ".0";
  return s;
}

std::string render_params_inline(const Params& p);

std::string render_value(const Value& v) {
  struct V {
    std::string operator()(bool b) const { return b ? "true" : "false"; }
    std::string operator()(int64_t i) const { return std::to_string(i); }
    std::string operator()(double d) const { return toml_number(d); }
    std::string operator()(const std::string& s) const { return toml_string(s); }
    std::string operator()(const std::vector<std::string>& l) const {
      std::string out = "[";
      for (size_t i = 0; i < l.size(); ++i) out += (i ? ", " : "") + toml_string(l[i]);
      return out + "]";
    }
    std::string operator()(const std::vector<int64_t>& l) const {
      std::string out = "[";
      for (size_t i = 0; i < l.size(); ++i) out += (i ? ", " : "") + std::to_string(l[i]);
      return out + "]";
    }
    std::string operator()(const std::vector<Params>& l) const {
      if (l.empty()) return "[]";
      std::string out = "[\n";
      for (const auto& p : l) out += "  " + render_params_inline(p) + ",\n";
      return out + "]";
    }
  };
  return std::visit(V{}, v);
}

std::string render_params_inline(const Params& p) {
  std::string out = "{ ";
  bool first = true;
  for (const auto& item : p.all()) {
    out += (first ? "" : ", ") + item.key + " = " + render_value(item.value);
    first = false;
  }
  return out + " }";
}

void render_fields(std::ostringstream& out, const Params& params, const FieldList& fields, bool comments) {
  for (const auto& f : fields) {
    const Param* p = params.find(f.key);
    const Value& v = p ? p->value : f.fallback;
    std::string line = f.key + " = " + render_value(v);
    if (comments) {
      if (line.find('\n') != std::string::npos) {
        out << "# " << f.help << "\n" << line << "\n";
        continue;
      }
      // Columns count code points: the special tokens' spellings are not ASCII.
      size_t width = 0;
      for (char c : line) width += (static_cast<unsigned char>(c) & 0xC0) != 0x80;
      size_t pad = width < 34 ? 34 - width : 1;
      line += std::string(pad, ' ') + "# " + f.help;
    }
    out << line << "\n";
  }
}

std::string render(const Pipeline& p, bool comments) {
  std::ostringstream out;
  if (comments) {
    out << "# sheaf pipeline. Stages run in the order written; each [[stage]] has a kind\n"
           "# and an optional name (default: the kind) used by --until, --set, rejected.tsv\n"
           "# and the run record. Every key is documented in docs/pipeline.md.\n";
  }
  out << "sheaf = " << kPipelineFormat << (comments ? "                         # pipeline format version" : "")
      << "\n\n";
  if (!p.named_corpora) {
    out << "[corpus]\n";
    render_fields(out, p.corpus_params, corpus_fields(), comments);
  }
  for (size_t i = 0; p.named_corpora && i < p.corpora.size(); ++i) {
    const CorpusSpec& c = p.corpora[i];
    if (comments && i == 0)
      out << "# Corpora in priority order: when two hold the same pair, dedup and near-dup\n"
             "# keep the earlier corpus's.\n";
    out << (i ? "\n" : "") << "[[corpus]]\n";
    render_fields(out, c.params, named_corpus_fields(), comments);
    for (const auto& [stage, params] : c.stage_params) {
      out << "[corpus.stages." << stage << "]\n";
      const StageSpec& s = p.stages[static_cast<size_t>(p.stage_index(stage))];
      for (const auto& item : params.all()) {
        const Param* base = s.params.find(item.key);
        if (base != nullptr && render_value(base->value) == render_value(item.value)) continue;
        out << item.key << " = " << render_value(item.value) << "\n";
      }
    }
  }
  out << "\n[output]\n";
  render_fields(out, p.output_params, output_fields(), comments);
  for (const auto& s : p.stages) {
    out << "\n";
    if (comments) out << "# " << s.kind->help << "\n";
    out << "[[stage]]\nkind = " << toml_string(s.kind->kind) << "\n";
    if (s.name != s.kind->kind) out << "name = " << toml_string(s.name) << "\n";
    render_fields(out, s.params, s.kind->fields, comments);
  }
  return out.str();
}

Params defaults(const FieldList& fields) {
  Params p;
  for (const auto& f : fields) p.set(f.key, f.fallback, {}, true);
  return p;
}

}  // namespace

std::string render_pipeline(const Pipeline& p) { return render(p, false); }

namespace {

std::string layout_for(const std::vector<std::string>& files) {
  if (files.size() == 2) return "aligned";
  const std::string& f = files.empty() ? std::string() : files[0];
  bool jsonl = f.ends_with(".jsonl") || f.ends_with(".jsonl.gz") || f.ends_with(".jsonl.zst");
  return jsonl ? "jsonl" : "tsv";
}

// Absolute paths: a file init writes works wherever it is saved (relative
// paths in a pipeline file are read relative to the file, not to where sheaf
// runs).
std::vector<std::string> absolute_paths(const std::vector<std::string>& files) {
  std::vector<std::string> out;
  for (const auto& f : files) {
    std::error_code ec;
    auto abs = std::filesystem::absolute(f, ec);
    out.push_back(f == "-" || ec ? f : abs.lexically_normal().string());
  }
  return out;
}

// "NAME=FILE" or "NAME=FILE1,FILE2" -> (name, files).
std::pair<std::string, std::vector<std::string>> split_corpus_option(const std::string& text) {
  size_t eq = text.find('=');
  std::string name = eq == std::string::npos ? "" : text.substr(0, eq);
  std::vector<std::string> files;
  std::string rest = eq == std::string::npos ? text : text.substr(eq + 1);
  size_t start = 0;
  for (;;) {
    size_t comma = rest.find(',', start);
    files.push_back(rest.substr(start, comma == std::string::npos ? std::string::npos : comma - start));
    if (comma == std::string::npos) break;
    start = comma + 1;
  }
  return {name, files};
}

}  // namespace

Status check_init_options(const InitOptions& o) {
  if (o.inputs.empty() == o.corpora.empty())
    return Error(ErrorKind::kUsage, "give either --input (one corpus) or --corpus NAME=FILE (several), not both or neither");
  if (o.inputs.size() > 2)
    return Error(ErrorKind::kUsage, "--input takes one file, or two line-aligned files; for several corpora use --corpus NAME=FILE");
  std::vector<std::string> seen;
  for (const auto& c : o.corpora) {
    auto [name, files] = split_corpus_option(c);
    bool ok = !name.empty();
    for (char ch : name) ok &= std::isalnum(static_cast<unsigned char>(ch)) || ch == '-' || ch == '_';
    for (const auto& f : files) ok &= !f.empty();
    if (!ok || files.size() > 2)
      return Error(ErrorKind::kUsage, "--corpus takes NAME=FILE or NAME=SOURCE_FILE,TARGET_FILE (a name of letters, digits, "
                                      "'-' and '_'), not \"" + c + "\"");
    for (const auto& s : seen)
      if (s == name) return Error(ErrorKind::kUsage, "--corpus names \"" + name + "\" twice");
    seen.push_back(name);
  }
  return {};
}

std::string init_template(const InitOptions& o) {
  Pipeline p;
  p.corpus_params = defaults(corpus_fields());
  p.output_params = defaults(output_fields());
  p.corpus_params.set("layout", layout_for(o.inputs), {}, false);
  p.corpus_params.set("files", absolute_paths(o.inputs), {}, false);
  p.corpus_params.set("source_lang", o.source_lang, {}, false);
  p.corpus_params.set("target_lang", o.target_lang, {}, false);
  for (size_t i = 0; i < o.corpora.size(); ++i) {
    auto [name, files] = split_corpus_option(o.corpora[i]);
    CorpusSpec c;
    c.name = name;
    c.params = defaults(named_corpus_fields());
    c.params.set("name", name, {}, false);
    c.params.set("layout", layout_for(files), {}, false);
    c.params.set("files", absolute_paths(files), {}, false);
    c.params.set("source_lang", o.source_lang, {}, false);
    c.params.set("target_lang", o.target_lang, {}, false);
    p.corpora.push_back(std::move(c));
    p.named_corpora = true;
  }
  p.output_params.set("dir", o.out_dir, {}, false);
  for (const auto& kind : stage_kinds()) {
    if (kind.kind == "near-dup" && !o.near_dup) continue;
    StageSpec s;
    s.kind = &kind;
    s.name = kind.kind;
    s.params = defaults(kind.fields);
    for (const auto& f : kind.fields) {
      if (f.key == "seed") s.params.set("seed", o.seed, {}, false);
      if (f.key == "size" && kind.role == StageRole::kVocabulary) s.params.set("size", o.vocab_size, {}, false);
    }
    p.stages.push_back(std::move(s));
  }
  return render(p, true);
}

const StageKind* find_stage_kind(std::string_view kind) {
  for (const auto& k : stage_kinds())
    if (k.kind == kind) return &k;
  return nullptr;
}

}  // namespace sheaf
