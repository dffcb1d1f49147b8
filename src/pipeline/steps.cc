#include "pipeline/steps.h"

#include "stages/vocabulary.h"

namespace sheaf {

Status run_steps(const StepInput& in, int threads) {
  const Pipeline& p = *in.pipeline;
  for (int i = 0; i <= in.last_stage; ++i) {
    const StageSpec& spec = p.stages[static_cast<size_t>(i)];
    if (spec.kind->role == StageRole::kVocabulary) {
      auto files = run_vocabulary(in, spec, threads);
      if (!files.ok()) return files.error();
    }
  }
  return {};
}

}  // namespace sheaf
