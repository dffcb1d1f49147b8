// Runner: executes a Pipeline.
//
// Pass 1 streams the corpus through the filter stages and the split stage
// with oneTBB's parallel_pipeline: a serial reader, then for each stage its
// map() in a parallel filter and its reduce() (if any) in a serial in-order
// filter, then a serial in-order writer. At most 4 x threads batches are in
// flight, which bounds memory. The writer sees batches in input order, so
// every output is byte-identical whatever the thread count.
// After pass 1 come the learning and encoding steps (vocabulary, shards) and
// the summary; manifest.json is written last, atomically.
#pragma once

#include <atomic>
#include <string>

#include "core/error.h"
#include "core/interrupt.h"
#include "pipeline/pipeline.h"
#include "report/run_record.h"

namespace sheaf {

struct RunOptions {
  std::string out_dir;      // overrides [output].dir when set
  std::vector<std::string> inputs;  // overrides [corpus].files when set
  int threads = 0;          // 0 = number of cores
  std::string until;        // stop after this stage
  bool force = false;
  bool progress = false;    // progress line on standard error
  size_t batch_pairs = 4096;
};

Result<RunRecord> run_pipeline(const Pipeline& p, const RunOptions& o);

}  // namespace sheaf
