#include "stages/split.h"

#include <xxhash.h>

#include <algorithm>
#include <cmath>

namespace sheaf {

SplitStage::SplitStage(const StageContext& ctx, std::vector<std::string> names, std::vector<double> fractions,
                       std::vector<int64_t> counts, SplitKey key, uint64_t seed)
    : names_(std::move(names)), fractions_(std::move(fractions)), counts_(std::move(counts)), key_(key), seed_(seed) {
  for (int64_t c : counts_) need_ += c;
  if (ctx.pipeline != nullptr)
    for (const auto& c : ctx.pipeline->corpora) {
      held_out_.push_back(c.held_out);
      restricted_ |= !c.held_out;
    }
}

std::string SplitStage::key_text(const Pair& p) const {
  switch (key_) {
    case SplitKey::kSource: return std::string(p.text[0]);
    case SplitKey::kTarget: return std::string(p.text[1]);
    case SplitKey::kPair: {
      std::string k(p.text[0]);
      k += '\t';
      k += p.text[1];
      return k;
    }
  }
  return {};
}

uint64_t SplitStage::group_hash(std::string_view key_text) const {
  return XXH3_64bits_withSeed(key_text.data(), key_text.size(), seed_);
}

int SplitStage::assign(uint64_t h, uint32_t corpus) const {
  if (!counts_.empty()) {
    auto it = chosen_.find(h);
    int split = it == chosen_.end() ? 0 : it->second;
    return split == 0 || held_out(corpus) ? split : -1;
  }
  int split = by_fraction(h);
  if (split == 0 || held_out(corpus)) return split;
  return held_groups_.count(h) ? -1 : 0;
}

int SplitStage::by_fraction(uint64_t h) const {
  // u = h / 2^64, compared without floating-point rounding of h itself:
  // a fraction f covers hashes below f * 2^64.
  double u = static_cast<double>(h >> 11) * 0x1.0p-53;
  double acc = 0;
  for (size_t i = 1; i < fractions_.size(); ++i) {
    acc += fractions_[i];
    if (u < acc) return static_cast<int>(i);
  }
  return 0;
}

void SplitStage::map(PairBatch& batch) {
  for (Pair& p : batch.pairs) {
    if (!p.kept()) continue;
    std::string k = key_text(p);
    p.key[0] = group_hash(k);
    if (!deferred()) p.split = assign(p.key[0]);
  }
}
void SplitStage::reduce(PairBatch& batch) {
  // Only held-out corpora's pairs choose the splits outside train.
  // Fraction mode (with a corpus not held out): remember the held-out groups
  // that left train. Count mode: keep the groups with the smallest hashes until they hold
  // `need_` pairs, plus what filling the splits one after another can
  // overshoot (a group is never cut); a larger hash is dropped from the map
  // as soon as the smaller ones suffice without it.
  for (Pair& p : batch.pairs) {
    if (!p.kept() || !held_out(p.corpus)) continue;
    uint64_t h = p.key[0];
    if (counts_.empty()) {
      if (by_fraction(h) != 0) held_groups_.insert(h);
      continue;
    }
    if (!smallest_.empty() && held_ >= need_ + slack() && h > smallest_.rbegin()->first) continue;
    int64_t n = ++smallest_[h];
    max_group_ = std::max(max_group_, n);
    ++held_;
    while (!smallest_.empty()) {
      auto last = std::prev(smallest_.end());
      if (held_ - last->second < need_ + slack()) break;
      held_ -= last->second;
      smallest_.erase(last);
    }
  }
}

Status SplitStage::finish() {
  if (!deferred()) return {};
  size_t split = 1;
  int64_t filled = 0;
  for (const auto& [h, n] : smallest_) {
    while (split < counts_.size() && filled >= counts_[split]) {
      ++split;
      filled = 0;
    }
    if (split >= counts_.size()) break;
    chosen_[h] = static_cast<int>(split);
    filled += n;
  }
  return {};
}

namespace {

const FieldList& extra_fields() {
  static const FieldList f = {
      {"name", FieldType::kString, std::string(""), "the split's name (letters, digits, '-', '_')"},
      {"size", FieldType::kFractionOrCount, 0.0, "a fraction or a count of pairs, like dev and test"},
  };
  return f;
}

}  // namespace

const StageKind& split_kind() {
  static const StageKind k{
      "split",
      "train/dev/test by a seeded hash of the source: reproducible, no sentence in two splits",
      StageRole::kSplit,
      {
          {"dev", FieldType::kFractionOrCount, 0.002,
           "dev size: a fraction (0.002 = 2,000 of 1M pairs) or a whole number of pairs"},
          {"test", FieldType::kFractionOrCount, 0.002, "test size, as dev; use the same mode for all sizes"},
          {"extra", FieldType::kTableList, std::vector<Params>{}, "further splits: [{ name = \"test2\", size = 0.002 }]",
           0, 0, {}, &extra_fields()},
          {"key", FieldType::kChoice, std::string("source"), "pairs sharing this stay together: source, target or pair", 0,
           0, {"source", "target", "pair"}},
          {"seed", FieldType::kInt, int64_t{1}, "seed of the assignment hash", 0, 9.2e18},
      }};
  return k;
}

Result<std::unique_ptr<Stage>> make_split(const StageContext& ctx) {
  const Params& p = ctx.spec->params;
  std::vector<std::string> names = {"train", "dev", "test"};
  std::vector<const Param*> sizes = {nullptr, p.find("dev"), p.find("test")};
  std::vector<Value> values = {Value(0.0), p.find("dev")->value, p.find("test")->value};
  std::vector<Location> where = {ctx.spec->where, p.where("dev"), p.where("test")};
  for (const Params& e : p.tables("extra")) {
    const std::string& n = e.text("name");
    Location w = e.where("name").empty() ? ctx.spec->where : e.where("name");
    bool ok = !n.empty();
    for (char c : n) ok &= std::isalnum(static_cast<unsigned char>(c)) || c == '-' || c == '_';
    if (!ok)
      return Error(ErrorKind::kPipeline, "stage \"" + ctx.spec->name + "\": every extra split needs a name of letters, digits, '-' and '_'", w);
    for (const auto& m : names)
      if (m == n) return Error(ErrorKind::kPipeline, "stage \"" + ctx.spec->name + "\": split \"" + n + "\" is named twice", w);
    names.push_back(n);
    values.push_back(e.find("size")->value);
    where.push_back(e.where("size").empty() ? w : e.where("size"));
  }
  bool any_count = false, any_fraction = false;
  std::vector<double> fractions(names.size(), 0.0);
  std::vector<int64_t> counts(names.size(), 0);
  double total = 0;
  for (size_t i = 1; i < names.size(); ++i) {
    if (const auto* c = std::get_if<int64_t>(&values[i])) {
      counts[i] = *c;
      any_count |= *c > 0;
    } else {
      fractions[i] = std::get<double>(values[i]);
      total += fractions[i];
      any_fraction |= fractions[i] > 0;
    }
  }
  if (any_count && any_fraction)
    return Error(ErrorKind::kPipeline,
                 "stage \"" + ctx.spec->name + "\": sizes mix fractions and counts; write all as fractions (0.01) or all as whole numbers (2000)",
                 ctx.spec->where);
  if (total >= 1.0)
    return Error(ErrorKind::kPipeline, "stage \"" + ctx.spec->name + "\": the split fractions add up to 1 or more, leaving no train split",
                 ctx.spec->where);
  const std::string& k = p.text("key");
  SplitKey key = k == "target" ? SplitKey::kTarget : k == "pair" ? SplitKey::kPair : SplitKey::kSource;
  if (!any_count) counts.clear();
  return std::unique_ptr<Stage>(std::make_unique<SplitStage>(ctx, std::move(names), std::move(fractions),
                                                              std::move(counts), key,
                                                              static_cast<uint64_t>(p.integer("seed"))));
}

}  // namespace sheaf
