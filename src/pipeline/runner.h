// Runner: executes a Pipeline.
//
// Pass 1 streams the corpus through the filter stages and the split stage
// with oneTBB's parallel_pipeline: a serial reader, then for each stage its
// map() in a parallel filter and its reduce() (if any) in a serial in-order
// filter, then a serial in-order writer. At most 4 x threads batches are in
// flight, which bounds memory. The writer sees batches in input order, so
// every output is byte-identical whatever the thread count.
// After pass 1 come the steps of the pipeline file (run/step.h: the
// vocabulary, the shards), in order, then the closing steps the caller
// gives (the summary); manifest.json is written last, atomically. The runner
// names no stage kind: it knows streaming stages, the split router and
// steps only through their interfaces.
#pragma once

#include <atomic>
#include <functional>
#include <memory>
#include <string>
#include <vector>

#include "core/error.h"
#include "core/interrupt.h"
#include "pipeline/pipeline.h"
#include "run/run_record.h"
#include "run/step.h"

namespace sheaf {

struct RunOptions {
  std::string out_dir;      // overrides [output].dir when set
  std::vector<std::string> inputs;  // overrides [corpus].files when set
  int threads = 0;          // 0 = number of cores
  std::string until;        // stop after this stage
  bool force = false;
  bool progress = false;    // progress line on standard error
  size_t batch_pairs = 4096;
  // Steps run after the pipeline's own, also after --until (the summary).
  std::vector<std::function<std::unique_ptr<Step>()>> closing_steps;
};

Result<RunRecord> run_pipeline(const Pipeline& p, const RunOptions& o);

}  // namespace sheaf
