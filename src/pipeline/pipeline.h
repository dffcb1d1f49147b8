// Pipeline: the typed, validated description of one pipeline file.
//
// load_pipeline() parses the TOML file, applies --set overrides, checks every
// key against the schema (see schema.h) and the order of stages, and fills in
// defaults. Nothing here reads the corpus. render_pipeline() writes the
// resolved description back as TOML; init_template() writes the commented
// template `sheaf init` prints.
#pragma once

#include <string>
#include <vector>

#include "core/error.h"
#include "pipeline/schema.h"

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

// Parses "NAME.KEY=VALUE".
Result<Override> parse_override(const std::string& text);

Result<Pipeline> load_pipeline(const std::string& path, const std::vector<Override>& overrides = {});
Result<Pipeline> load_pipeline_text(const std::string& text, const std::string& name,
                                    const std::vector<Override>& overrides = {});

std::string render_pipeline(const Pipeline& p);

struct InitOptions {
  // One corpus: one file, or two aligned files.
  std::vector<std::string> inputs;
  // Named corpora, in priority order: "NAME=FILE" or "NAME=FILE1,FILE2";
  // when given, `inputs` must be empty.
  std::vector<std::string> corpora;
  bool near_dup = false;  // write the near-dup stage (opt-in: see docs/pipeline.md)
  std::string source_lang, target_lang;
  int64_t vocab_size = 8000;
  int64_t seed = 1;
  std::string out_dir = "sheaf-run";
};
// Checks the options (--corpus NAME=FILE[,FILE2], names, one of --input
// or --corpus) before init_template.
Status check_init_options(const InitOptions& o);
std::string init_template(const InitOptions& o);

// The schema of the [corpus] and [output] sections and of every stage kind.
const FieldList& corpus_fields();
// The keys of one [[corpus]] table: name, the [corpus] keys, held_out,
// weight, skip (plus its [corpus.stages.NAME] tables).
const FieldList& named_corpus_fields();
const FieldList& output_fields();
const std::vector<StageKind>& stage_kinds();
const StageKind* find_stage_kind(std::string_view kind);

}  // namespace sheaf
