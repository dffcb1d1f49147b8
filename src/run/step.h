// Step: the one interface of whole-corpus work.
//
// A streaming stage (stages/stage.h) sees pairs; a step sees what a pass has
// made: the split files, and what earlier steps left in memory. Learning a
// vocabulary, writing shards and writing the summary are steps; so will be
// merging the parts of a partitioned run. A step's kind declares, by name,
// the products it needs and the ones it provides (config/schema.h,
// StageKind::needs and ::provides); the loader checks from those names
// alone that every need is provided by pass 1 or by an earlier step, so the
// runner is a plain loop that names no kind.
//
// Products are of two sorts, both named:
//   - files in the run directory, listed in the run record as they are
//     written (the split files are the product "splits" of pass 1);
//   - values in memory, handed from step to step through Products (a
//     learned vocabulary goes to the shard step without being read back).
#pragma once

#include <any>
#include <cstdint>
#include <map>
#include <memory>
#include <string>
#include <string_view>

#include "config/pipeline.h"
#include "core/error.h"
#include "run/run_dir.h"
#include "run/run_record.h"

namespace sheaf {

// The names of the products the built-in steps exchange.
inline constexpr std::string_view kSplitsProduct = "splits";          // pass 1: SPLIT.tsv files
inline constexpr std::string_view kVocabularyProduct = "vocabulary";  // LearnedVocabularies (stages/vocabulary.h)
inline constexpr std::string_view kShardsProduct = "shards";          // shards/*.shard, token lengths in the record
inline constexpr std::string_view kPass1Product = "pass1";            // Pass1Output*, while the steps run

// What pass 1 leaves open for the steps: where each pair of a split file
// came from, and rejected.tsv, to which a step that drops pairs (the shard
// step's token limits) adds rows. rejected.tsv is committed after the last
// step.
class Pass1Output {
 public:
  virtual ~Pass1Output() = default;
  struct Origin {
    uint32_t corpus = 0;
    uint64_t line = 0;
  };
  // The input corpus and line of the `index`-th pair (from 0) of the split
  // file `split` (its index in RunRecord::splits).
  virtual Result<Origin> origin(size_t split, uint64_t index) = 0;
  // Adds a rejected.tsv row for a pair of a split file that `stage` drops:
  // ORIGIN, STAGE, REASON, "-", then the pair as in the split file.
  virtual void reject(const Origin& from, std::string_view stage, std::string_view reason, std::string_view source,
                      std::string_view target) = 0;
};

// Values in memory that steps hand on, by product name. A step that
// provides a product puts its value here; one that needs it takes it (or
// reads it, leaving it for later steps).
class Products {
 public:
  template <typename T>
  void put(std::string_view name, T value) {
    values_[std::string(name)] = std::make_shared<T>(std::move(value));
  }
  // The value, or nullptr when no step provided it (the run stopped
  // before that step, or the product is files only).
  template <typename T>
  T* get(std::string_view name) const {
    auto it = values_.find(name);
    if (it == values_.end()) return nullptr;
    auto* held = std::any_cast<std::shared_ptr<T>>(&it->second);
    return held != nullptr ? held->get() : nullptr;
  }
  // Frees a value no later step needs (the encoder's start units are large).
  void drop(std::string_view name) {
    auto it = values_.find(name);
    if (it != values_.end()) values_.erase(it);
  }

 private:
  std::map<std::string, std::any, std::less<>> values_;
};

// Everything a step may know while it runs.
struct StepContext {
  const Pipeline* pipeline = nullptr;
  const StageSpec* spec = nullptr;  // its stage in the pipeline file; nullptr for the closing steps
  const RunDir* dir = nullptr;
  RunRecord* record = nullptr;
  Products* products = nullptr;
  int threads = 1;
};

class Step {
 public:
  virtual ~Step() = default;
  // Runs once, after pass 1 and the steps before it. Adds every file it
  // writes to the record (write_output, or OutputFile + an OutputEntry).
  virtual Status run(StepContext& ctx) = 0;
};

}  // namespace sheaf
