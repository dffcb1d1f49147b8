// Per-corpus stages: a filter stage that some named corpora skip or run with
// other keys ([[corpus]] skip = [...] and [corpus.stages.NAME] tables).
//
// with_corpus_variants() wraps the stage built for a spec when any corpus
// differs for it: the wrapper holds the stage as written and one more stage
// per corpus with its own keys, and hands each batch to the stage of the
// batch's corpus, or passes it untouched for a corpus that skips the stage.
// (The pair reader never mixes corpora in one batch.) Text from outside the
// corpus (exclusion lists) is rewritten by the stage as written.
#pragma once

#include <memory>

#include "stages/stage.h"

namespace sheaf {

Result<std::unique_ptr<Stage>> with_corpus_variants(const StageContext& ctx, std::unique_ptr<Stage> stage);

}  // namespace sheaf
