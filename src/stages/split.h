// split: assigns every kept pair to train, dev, test or a further named split.
//
// A pair's split is decided by u = XXH3_64(key, seed) / 2^64, where the key is
// the pair's source (default), target, or both sides; pairs with equal keys
// always share a split, so a sentence with two translations never sits in
// train and test at once.
// Fraction mode (every size a fraction): dev if u < f_dev, test if
// u < f_dev + f_test, then each further split in order, else train. Each pair
// is decided on its own, so appending data never moves an existing pair.
// Count mode (every size a whole number): the groups of pairs with the
// smallest hashes go to dev, then test, then further splits, until each holds
// at least its count (it can exceed it by the size of its last group minus
// one). Those groups are found with a bounded map while streaming; the pairs
// wait in a spool file until the end of the pass (the runner routes them).
// The runner asks the stage which split a pair belongs to; the stage keeps
// no other state.
#pragma once

#include <map>
#include <string>
#include <unordered_map>
#include <vector>

#include "stages/stage.h"

namespace sheaf {

enum class SplitKey { kSource, kTarget, kPair };

class SplitStage : public Stage {
 public:
  SplitStage(const StageContext& ctx, std::vector<std::string> names, std::vector<double> fractions,
             std::vector<int64_t> counts, SplitKey key, uint64_t seed);

  // Split names; index 0 is train.
  const std::vector<std::string>& names() const { return names_; }
  // Count mode: pair.split is known only after finish(); call assign().
  bool deferred() const { return !counts_.empty(); }
  int assign(uint64_t group_hash) const;
  // The text the split key is computed from.
  std::string key_text(const Pair& p) const;
  uint64_t group_hash(std::string_view key_text) const;

  void map(PairBatch& batch) override;
  bool has_reduce() const override { return deferred(); }
  void reduce(PairBatch& batch) override;
  Status finish() override;

 private:
  std::vector<std::string> names_;
  std::vector<double> fractions_;  // per split index (train unused)
  std::vector<int64_t> counts_;    // per split index, count mode
  SplitKey key_;
  uint64_t seed_;
  int64_t slack() const { return static_cast<int64_t>(counts_.size()) * (max_group_ - 1); }
  int64_t need_ = 0;
  int64_t max_group_ = 1;
  int64_t held_ = 0;
  std::map<uint64_t, int64_t> smallest_;  // count mode: group hash -> pairs
  std::unordered_map<uint64_t, int> chosen_;
};

const StageKind& split_kind();
Result<std::unique_ptr<Stage>> make_split(const StageContext& ctx);

}  // namespace sheaf
