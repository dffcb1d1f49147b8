// Pipeline: the typed, validated description of one pipeline file.
//
// Made by load_pipeline() (pipeline/pipeline.h), which parses the TOML file,
// applies --set overrides, checks every key against the schema (schema.h)
// and the order of stages, and fills in defaults. This folder holds only the
// description, so that every layer above (the readers, the stages, the run)
// can know it without knowing the loader. render_pipeline() writes the
// resolved description back as TOML.
#pragma once

#include <string>
#include <vector>

#include "config/schema.h"
#include "core/error.h"

namespace sheaf {

inline constexpr int kPipelineFormat = 1;

enum class Layout { kTsv, kAligned, kJsonl };

struct CorpusSpec {
  std::string name;  // [[corpus]] form: the corpus's name; "" for a single [corpus]
  Layout layout = Layout::kTsv;
  std::vector<std::string> files;  // one file, or two for kAligned; "-" = stdin
  std::string source_lang, target_lang;
  std::string source_field, target_field;  // kJsonl
  uint64_t max_line_bytes = 1 << 20;
  bool held_out = true;  // dev, test and further splits may take pairs from it
  double weight = 1.0;   // sampling weight, recorded for the training loader
  Params params;         // the corpus's resolved keys, as written or defaulted
  // Per-corpus changes to filter stages: stages this corpus's pairs pass
  // untouched, and stages run with some keys changed (the stage's params
  // with this corpus's keys on top, fully resolved).
  std::vector<std::string> skip;
  std::vector<std::pair<std::string, Params>> stage_params;
  Location where;
};

struct StageSpec {
  std::string name;
  const StageKind* kind = nullptr;
  Params params;
  Location where;
};

struct Pipeline {
  std::string path;         // the file it was loaded from
  std::string base_dir;     // relative paths in the file are relative to this
  // corpora[0], the only corpus of a [corpus] file; the languages, which
  // every corpus shares, are read from here.
  CorpusSpec corpus;
  // Every corpus in priority order (the order written): when two corpora
  // hold the same pair, deduplication keeps the earlier one's. One entry for
  // a [corpus] file.
  std::vector<CorpusSpec> corpora;
  bool named_corpora = false;  // written as [[corpus]] tables
  std::string output_dir;
  Params corpus_params, output_params;
  std::vector<StageSpec> stages;

  int stage_index(std::string_view name) const;
  // Where a pair came from, for reasons that name a kept line: "LINE" for a
  // single [corpus], "NAME:LINE" with named corpora.
  std::string origin(uint32_t corpus, uint64_t line) const;
  // Path as written in the file, resolved against base_dir.
  std::string resolve(const std::string& path) const;
};

struct Override {
  std::string target;  // stage name, or "corpus" / "output"
  std::string key;
  std::string toml_value;
};

std::string render_pipeline(const Pipeline& p);
// The same with every key's help as a comment (sheaf init).
std::string render_pipeline_template(const Pipeline& p);
// The defaults of every field.
Params default_params(const FieldList& fields);

// The schema of the [corpus] and [output] sections.
const FieldList& corpus_fields();
// The keys of one [[corpus]] table: name, the [corpus] keys, held_out,
// weight, skip (plus its [corpus.stages.NAME] tables).
const FieldList& named_corpus_fields();
const FieldList& output_fields();

}  // namespace sheaf
