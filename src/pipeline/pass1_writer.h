// Pass1Writer: the output side of pass 1, taking batches in input order.
//
// Writes each kept pair to its split file (SPLIT.tsv: source TAB target)
// and each dropped pair to rejected.tsv (ORIGIN TAB STAGE TAB REASON TAB
// SOURCE-BYTES-OR-"-" TAB the raw line(s), docs/outputs.md); counts every
// stage's pairs in and out and each reason, per corpus too; gathers the
// kept pairs' lengths for the summary. When the split stage decides only at
// the end (count mode, or corpora held out of dev and test), kept pairs are
// spooled to split-spool.bin (a private file, removed when routed) and
// routed by finish(). finish() also measures the overlap between splits.
// Each split file has a scratch file SPLIT.origins beside it (the corpus,
// u32, and input line, u64, of each of its pairs, native byte order) for
// the steps; rejected.tsv stays open until close(), after the steps.
#pragma once

#include <memory>
#include <string>
#include <vector>

#include "config/pipeline.h"
#include "core/error.h"
#include "core/pair_batch.h"
#include "run/run_dir.h"
#include "run/run_record.h"
#include "run/step.h"
#include "stages/stage.h"

namespace sheaf {

class Pass1Writer : public Pass1Output {
 public:
  // `split` is the split stage's router, or nullptr (then every kept pair
  // goes to `splits[0]`, train).
  Pass1Writer(const RunDir& dir, RunRecord& rec, const std::vector<std::string>& splits, const SplitRouter* split,
              const Pipeline& p);
  ~Pass1Writer() override;

  Status open();
  void take(PairBatch& b);
  // After the last batch: routes a spool, commits the files, lists them in
  // the record, measures the overlap between splits (on `threads`).
  Status finish(int threads);
  Status status() const;
  // Removes every file not yet committed.
  void discard();
  // Marks the rows of rejected.tsv written so far as final: finish() does
  // after pass 1, the runner after each step that succeeds.
  void keep_rows();
  // After the steps (whether or not they succeeded): commits rejected.tsv
  // (which the steps may have added rows to) and removes the scratch files.
  // With `take_back`, the rows written since the last keep_rows() (those of
  // a step that failed) are taken out first, so the file holds the rows of
  // pass 1 and of the steps that completed, each complete.
  Status close(bool take_back = false);

  // Pass1Output, for the steps.
  Result<Origin> origin(size_t split, uint64_t index) override;
  void reject(const Origin& from, std::string_view stage, std::string_view reason, std::string_view source,
              std::string_view target) override;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace sheaf
