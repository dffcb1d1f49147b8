// Steps: the work after pass 1 (learning a vocabulary, encoding shards,
// the summary), run in pipeline order up to the --until stage.
#pragma once

#include "core/error.h"
#include "pipeline/pipeline.h"
#include "pipeline/run_dir.h"
#include "report/run_record.h"

namespace sheaf {

struct StepInput {
  const Pipeline* pipeline;
  const RunDir* dir;
  RunRecord* record;
  int last_stage;  // index of the last stage to run
};

Status run_steps(const StepInput& in, int threads);

}  // namespace sheaf
