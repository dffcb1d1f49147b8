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
// Named corpora with held_out = false: their pairs go only to train. Dev,
// test and further splits are chosen among the held-out corpora's pairs
// (count mode counts only those), and a pair of another corpus whose key
// landed in one of them cannot go to train without leaking, so it is
// dropped with reason held-out-key:SPLIT. Which keys landed there is known
// only at the end of the pass, so such runs wait in the spool like count
// mode (in fraction mode the stage remembers the held-out groups outside
// train: about (dev + test) x pairs hashes).
#pragma once

#include <map>
#include <string>
#include <unordered_map>
#include <unordered_set>
#include <vector>

#include "stages/stage.h"

namespace sheaf {

enum class SplitKey { kSource, kTarget, kPair };

class SplitStage : public Stage, public SplitRouter {
 public:
  SplitStage(const StageContext& ctx, std::vector<std::string> names, std::vector<double> fractions,
             std::vector<int64_t> counts, SplitKey key, uint64_t seed);

  const SplitRouter* router() const override { return this; }
  // Split names; index 0 is train.
  const std::vector<std::string>& names() const override { return names_; }
  // Count mode, or some corpus not held out: pair.split is known only after
  // finish(); call assign().
  bool deferred() const override { return !counts_.empty() || restricted_; }
  // The split of a pair of `corpus` with this group hash; -1 when it must be
  // dropped (held-out-key) because its corpus cannot join that split.
  int assign(uint64_t group_hash, uint32_t corpus = 0) const override;
  // The text the split key is computed from.
  std::string key_text(const Pair& p) const override;
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
  int by_fraction(uint64_t h) const;
  bool held_out(uint32_t corpus) const { return corpus >= held_out_.size() || held_out_[corpus]; }
  std::vector<bool> held_out_;  // per corpus
  bool restricted_ = false;     // some corpus is not held out
  std::unordered_set<uint64_t> held_groups_;  // fraction mode, restricted: held-out groups outside train
};

const StageKind& split_kind();
Result<std::unique_ptr<Stage>> make_split(const StageContext& ctx);

}  // namespace sheaf
