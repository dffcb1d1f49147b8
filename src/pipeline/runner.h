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
#include "core/pair_batch.h"
#include "io/pair_reader.h"
#include "pipeline/pipeline.h"
#include "run/run_record.h"
#include "run/step.h"

namespace sheaf {

class Stage;

// Where pass 1's batches come from: the input files (the default), or the
// part files that a partitioned run's map jobs wrote (pipeline/spread.h).
class BatchSource {
 public:
  virtual ~BatchSource() = default;
  // As PairReader::next: false when nothing is left.
  virtual Result<bool> next(PairBatch& b, size_t max_pairs, size_t max_bytes) = 0;
  virtual uint64_t consumed() const = 0;
  virtual void set_oversize_sink(const PairReader::OversizeSink& sink) = 0;
  // The inputs of corpus `corpus`, for the run record, after the last batch.
  virtual Result<std::vector<InputInfo>> inputs(size_t corpus) const = 0;
  // The streaming stages before this index were applied already (by the
  // map jobs), and these are their counters.
  virtual size_t first_stage() const { return 0; }
  virtual std::vector<std::pair<std::string, uint64_t>> counters(size_t /*stage*/) const { return {}; }
};

// The input files as a BatchSource.
class ReaderSource : public BatchSource {
 public:
  explicit ReaderSource(std::unique_ptr<PairReader> rd) : rd_(std::move(rd)) {}
  Result<bool> next(PairBatch& b, size_t max_pairs, size_t max_bytes) override {
    return rd_->next(b, max_pairs, max_bytes);
  }
  uint64_t consumed() const override { return rd_->consumed(); }
  void set_oversize_sink(const PairReader::OversizeSink& sink) override { rd_->set_oversize_sink(sink); }
  Result<std::vector<InputInfo>> inputs(size_t corpus) const override { return rd_->inputs(corpus); }

 private:
  std::unique_ptr<PairReader> rd_;
};

// One pass of batches through stages: `source` in order, each stage's
// map() in parallel and reduce() in order, then (with `output_check`) the
// check that no kept field breaks a TSV row and the lengths the summary
// needs, then `take` on each batch in input order. At most
// batches_per_thread x threads batches are in flight, each of at most
// batch_pairs pairs and about batch_bytes raw bytes: that is most of a
// pass's memory when no stage holds a table.
struct StreamPass {
  BatchSource* source = nullptr;
  std::vector<Stage*> stages;
  bool output_check = true;
  std::function<Status(PairBatch&)> take;
  int threads = 1;
  size_t batch_pairs = 4096;
  size_t batch_bytes = 4 << 20;  // raw bytes a batch holds before it is handed on
  size_t batches_per_thread = 4;
  std::atomic<uint64_t>* bytes_read = nullptr;  // for a progress display, when set
  std::atomic<uint64_t>* pairs_read = nullptr;
};
Status stream_pass(const StreamPass& pass);

struct RunOptions {
  std::string out_dir;      // overrides [output].dir when set
  std::vector<std::string> inputs;  // overrides [corpus].files when set
  int threads = 0;          // 0 = number of cores
  std::string until;        // stop after this stage
  bool force = false;
  bool progress = false;    // progress line on standard error
  size_t batch_pairs = 4096;
  size_t batch_bytes = 4 << 20;
  size_t batches_per_thread = 4;
  // Steps run after the pipeline's own, also after --until (the summary).
  std::vector<std::function<std::unique_ptr<Step>()>> closing_steps;
  // Where pass 1's batches come from; unset: the pipeline's input files.
  std::function<Result<std::unique_ptr<BatchSource>>(const Pipeline&)> source;
};

Result<RunRecord> run_pipeline(const Pipeline& p, const RunOptions& o);

}  // namespace sheaf
