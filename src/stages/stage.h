// Stage: the one interface every pipeline stage implements.
//
// The runner streams PairBatches through stages in pipeline order. A stage
// sees only batches, never another stage. Its work has two halves:
//   map(batch)     depends on nothing but the batch, so the runner runs it on
//                  many batches at once (parallel);
//   reduce(batch)  needs state shared across batches (a dedup table, a split
//                  heap), so the runner calls it on one batch at a time, in
//                  input order, after map() of the same batch.
// Both halves skip pairs already dropped. A stage drops a pair with
// batch.drop(pair, index, "code[:detail]") using the index it was built with.
#pragma once

#include <functional>
#include <memory>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "core/error.h"
#include "core/pair_batch.h"
#include "config/pipeline.h"

namespace sheaf {

// Everything a stage may know when it is built.
struct StageContext {
  const Pipeline* pipeline = nullptr;
  const StageSpec* spec = nullptr;
  int index = 0;
  // Applies the rewrites of every stage before this one to one side's text
  // and returns the result, or nullopt-like empty + false when a stage would
  // drop it. Used for text from outside the corpus (exclusion lists), so that
  // it is compared after exactly the same normalization.
  std::function<bool(std::string&, int side)> canonical;
  // Built only for rewrite() (stages/text_rules.h): data that a stage needs
  // only to drop pairs (an exclusion list) need not be loaded.
  bool text_rules_only = false;
};

// What the writer at the end of pass 1 asks of the stage that routes kept
// pairs to splits (the one stage of role kSplit).
class SplitRouter {
 public:
  virtual ~SplitRouter() = default;
  // Split names; index 0 is train.
  virtual const std::vector<std::string>& names() const = 0;
  // True when a pair's split is known only after the last batch (then the
  // writer spools kept pairs and calls assign() for each at the end).
  virtual bool deferred() const = 0;
  // The split of a pair of `corpus` with this group hash; -1 when it must be
  // dropped (held-out-key) because its corpus cannot join that split.
  virtual int assign(uint64_t group_hash, uint32_t corpus) const = 0;
  // The text the split key is computed from.
  virtual std::string key_text(const Pair& p) const = 0;
};

class Stage {
 public:
  virtual ~Stage() = default;

  // The split stage returns itself; every other stage nullptr.
  virtual const SplitRouter* router() const { return nullptr; }

  virtual void map(PairBatch& /*batch*/) {}
  virtual bool has_reduce() const { return false; }
  virtual void reduce(PairBatch& /*batch*/) {}

  // What map() does to one side's text, for text outside the corpus:
  // rewrites `text` in place and returns true, or returns false when the
  // stage would drop any pair holding it. Stages that do not rewrite text
  // keep the default.
  virtual bool rewrite(std::string& /*text*/, int /*side*/) const { return true; }

  // Extra counters for the run record (name, value), e.g. repaired bytes.
  virtual std::vector<std::pair<std::string, uint64_t>> counters() const { return {}; }
  // False for a counter that describes the stage itself rather than counts
  // pairs (the size of a list it loaded): a spread run then takes it from
  // one map job instead of adding the jobs' values.
  virtual bool counter_adds(std::string_view /*name*/) const { return true; }

  // Called once after the last batch has passed reduce().
  virtual Status finish() { return {}; }

  // A stage whose reduce() does nothing but keep the first kept pair of each
  // key in input order and drop the others (exact dedup) says so here, so a
  // spread run can decide it by key bucket in separate jobs
  // (pipeline/spread.h): map() leaves the key in Pair::key. 0: not such a
  // stage; else the key's 64-bit words (1 or 2).
  virtual int first_of_key_words() const { return 0; }
  // The drop reason of a pair whose key first appeared on (corpus, line).
  virtual std::string repeat_reason(uint32_t /*corpus*/, uint64_t /*line*/) const { return {}; }
  // The counters reduce() would leave after seeing `distinct` keys.
  virtual std::vector<std::pair<std::string, uint64_t>> counters_after(uint64_t /*distinct*/) const { return {}; }
};

// Builds the stage a spec describes; errors (an invalid pattern, an unknown
// script code) point at the key in the pipeline file.
Result<std::unique_ptr<Stage>> make_stage(const StageContext& ctx);

// The checks that need more than the schema (split sizes, patterns, codes,
// minimum against maximum, special tokens): builds every streaming stage and
// every step, without reading the corpus. validate, init and run all call
// this one function, so they accept exactly the same files.
Status check_stages(const Pipeline& p);

// The streaming stages of `p`, in pipeline order, each built knowing the
// rewrites of those before it (with their per-corpus variants); the steps,
// which follow them, are not built.
Result<std::vector<std::unique_ptr<Stage>>> build_streaming_stages(const Pipeline& p);

}  // namespace sheaf
