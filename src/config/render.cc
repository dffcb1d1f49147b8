// Writing a Pipeline back as TOML: `sheaf validate`'s resolved output,
// the run's pipeline.toml and `sheaf init`'s commented template.
#include <charconv>
#include <filesystem>
#include <sstream>

#include "config/pipeline.h"
#include "core/text.h"

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
      size_t width = count_code_points(line);
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

}  // namespace

std::string render_pipeline(const Pipeline& p) { return render(p, false); }
std::string render_pipeline_template(const Pipeline& p) { return render(p, true); }

Params default_params(const FieldList& fields) {
  Params p;
  for (const auto& f : fields) p.set(f.key, f.fallback, {});
  return p;
}

}  // namespace sheaf

