// TextRules: the text rewrites of a pipeline, for text from outside a run.
//
// A model trained on a run's shards must see, at inference, text rewritten
// exactly as the corpus was: the same normalization, the same pattern
// rewrites, in the same order. TextRules builds the streaming stages of a
// pipeline that come before the split (the ones pass 1 runs) and applies
// each one's Stage::rewrite() to one side's text, in pipeline order; it is
// what the exclude stage compares with (StageContext::canonical), made
// available to `sheaf encode --run` and the Python package.
//
// Text a stage would drop (a pattern drop rule matches, invalid UTF-8) has
// no answer from the pipeline; apply() still returns text for it: a stage
// that would drop leaves what it had rewritten so far and the later stages
// still run, so that every text can be encoded.
//
// Thread-safe: apply() may run on many threads at once (rewrite() is const
// and every stage's map() is already run concurrently).
#pragma once

#include <memory>
#include <string>
#include <vector>

#include "core/error.h"
#include "config/pipeline.h"
#include "stages/stage.h"

namespace sheaf {

class TextRules {
 public:
  // The stages are built with StageContext::text_rules_only set, so a stage
  // that needs outside data only to drop pairs (the exclude stage's lists)
  // does not load it. `p` must outlive the TextRules.
  static Result<TextRules> build(const Pipeline& p);

  // Rewrites `text` (one side: 0 source, 1 target) as the pipeline would;
  // returns false if some stage would have dropped it (the text is then
  // rewritten as far as the stages could, see above).
  bool apply(std::string& text, int side) const;

  size_t stages() const { return stages_ ? stages_->size() : 0; }

 private:
  // On the heap: StageContext::canonical of each stage points at the stages
  // built before it, and a TextRules is moved.
  std::unique_ptr<std::vector<std::unique_ptr<Stage>>> stages_;
};

// The resolved pipeline a run writes into its directory (pipeline.toml), so
// that a run directory alone is enough to encode text as it was encoded.
inline constexpr const char* kRunPipelineFile = "pipeline.toml";

}  // namespace sheaf
