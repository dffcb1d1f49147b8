#include "pipeline/steps.h"

#include "report/summary.h"
#include "stages/shards.h"
#include "stages/vocabulary.h"

namespace sheaf {

Status run_steps(const StepInput& in, int threads) {
  const Pipeline& p = *in.pipeline;
  std::vector<std::string> vocab_files;
  for (int i = 0; i <= in.last_stage; ++i) {
    const StageSpec& spec = p.stages[static_cast<size_t>(i)];
    if (spec.kind->role == StageRole::kVocabulary) {
      auto files = run_vocabulary(in, spec, threads);
      if (!files.ok()) return files.error();
      vocab_files = std::move(files.value());
    } else if (spec.kind->role == StageRole::kShards) {
      SHEAF_TRY(run_shards(in, spec, vocab_files, threads));
    }
  }
  return write_summary(in, threads);
}

}  // namespace sheaf
