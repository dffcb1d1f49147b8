// Loading a pipeline file into its typed description (config/pipeline.h).
//
// load_pipeline() parses the TOML file, applies --set overrides, checks every
// key against the schema (config/schema.h) and the order of stages (from
// what each step needs and provides), and fills in defaults. Nothing here
// reads the corpus. init_template() writes the commented template `sheaf
// init` prints.
#pragma once

#include <string>
#include <vector>

#include "config/pipeline.h"
#include "core/error.h"

namespace sheaf {

// Parses "NAME.KEY=VALUE".
Result<Override> parse_override(const std::string& text);

Result<Pipeline> load_pipeline(const std::string& path, const std::vector<Override>& overrides = {});
Result<Pipeline> load_pipeline_text(const std::string& text, const std::string& name,
                                    const std::vector<Override>& overrides = {});

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

}  // namespace sheaf
