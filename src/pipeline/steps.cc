#include "pipeline/steps.h"

#include "report/summary.h"
#include "stages/shards.h"
#include "stages/vocabulary.h"

namespace sheaf {

Status run_steps(const StepInput& in, int threads) {
  const Pipeline& p = *in.pipeline;
  LearnedVocabularies vocab;
  for (int i = 0; i <= in.last_stage; ++i) {
    const StageSpec& spec = p.stages[static_cast<size_t>(i)];
    if (spec.kind->role == StageRole::kVocabulary) {
      auto learned = run_vocabulary(in, spec, threads);
      if (!learned.ok()) return learned.error();
      vocab = std::move(learned.value());
    } else if (spec.kind->role == StageRole::kShards) {
      SHEAF_TRY(run_shards(in, spec, vocab.files, std::move(vocab.units), threads));
    }
  }
  return write_summary(in, threads);
}

}  // namespace sheaf
