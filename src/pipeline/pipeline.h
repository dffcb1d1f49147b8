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
  Layout layout = Layout::kTsv;
  std::vector<std::string> files;  // one file, or two for kAligned; "-" = stdin
  std::string source_lang, target_lang;
  std::string source_field, target_field;  // kJsonl
  uint64_t max_line_bytes = 1 << 20;
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
  CorpusSpec corpus;
  std::string output_dir;
  Params corpus_params, output_params;
  std::vector<StageSpec> stages;

  int stage_index(std::string_view name) const;
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
  std::vector<std::string> inputs;
  std::string source_lang, target_lang;
  int64_t vocab_size = 8000;
  int64_t seed = 1;
  std::string out_dir = "sheaf-run";
};
std::string init_template(const InitOptions& o);

// The schema of the [corpus] and [output] sections and of every stage kind.
const FieldList& corpus_fields();
const FieldList& output_fields();
const std::vector<StageKind>& stage_kinds();
const StageKind* find_stage_kind(std::string_view kind);

}  // namespace sheaf
