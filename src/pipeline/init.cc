// `sheaf init`'s template: the pipeline of every stage kind with its
// defaults, written with comments.
#include <algorithm>
#include <filesystem>

#include "pipeline/pipeline.h"
#include "stages/registry.h"

namespace sheaf {

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
  p.corpus_params = default_params(corpus_fields());
  p.output_params = default_params(output_fields());
  p.corpus_params.set("layout", layout_for(o.inputs), {});
  p.corpus_params.set("files", absolute_paths(o.inputs), {});
  p.corpus_params.set("source_lang", o.source_lang, {});
  p.corpus_params.set("target_lang", o.target_lang, {});
  for (size_t i = 0; i < o.corpora.size(); ++i) {
    auto [name, files] = split_corpus_option(o.corpora[i]);
    CorpusSpec c;
    c.name = name;
    c.params = default_params(named_corpus_fields());
    c.params.set("name", name, {});
    c.params.set("layout", layout_for(files), {});
    c.params.set("files", absolute_paths(files), {});
    c.params.set("source_lang", o.source_lang, {});
    c.params.set("target_lang", o.target_lang, {});
    p.corpora.push_back(std::move(c));
    p.named_corpora = true;
  }
  p.output_params.set("dir", o.out_dir, {});
  for (const StageKind* kind : stage_kinds()) {
    if (kind->opt_in && !(kind->kind == "near-dup" && o.near_dup)) continue;
    StageSpec s;
    s.kind = kind;
    s.name = kind->kind;
    s.params = default_params(kind->fields);
    bool learns = std::find(kind->provides.begin(), kind->provides.end(), kVocabularyProduct) != kind->provides.end();
    for (const auto& f : kind->fields) {
      if (f.key == "seed") s.params.set("seed", o.seed, {});
      if (f.key == "size" && learns) s.params.set("size", o.vocab_size, {});
    }
    p.stages.push_back(std::move(s));
  }
  return render_pipeline_template(p);
}


}  // namespace sheaf
