// vocabulary: learns a byte-pair-encoding vocabulary from the train split.
//
// A step (run/step.h): it runs after pass 1 on train.tsv, so dev and test
// never influence it; it needs "splits" and provides "vocabulary" (a
// LearnedVocabularies, in memory, for the shard step and the summary). One vocabulary for both sides (shared), or one per side
// (separate); "auto" shares when both languages are written in the same
// scripts (the script table of the script stage). The vocabulary has exactly
// `size` tokens: 4 special, 256 byte, the base alphabet, and merges (fewer if
// no pair occurs min_count times; the run record says so). Learning runs up
// to the largest of `size` and the `sweep` sizes once; every smaller
// vocabulary is a prefix of it, and each sweep size is evaluated on the dev
// split (tokens per sentence and per word, sentences over sweep_max_length
// tokens, byte-token rate). `user_tokens` get the last ids (within
// `size`); the encoder never splits them. `reuse` loads vocabulary files
// instead of learning. Writes vocab.shared.txt, or vocab.source.txt
// and vocab.target.txt (docs/vocabulary-format.md), and pipeline.toml.
#pragma once

#include <string>
#include <vector>

#include <memory>

#include "config/pipeline.h"
#include "run/step.h"
#include "subword/trainer.h"
#include "subword/vocabulary.h"

namespace sheaf {

const StageKind& vocabulary_kind();

struct VocabularyPlan {
  bool shared = true;
  TrainOptions train;  // size = the largest size learned
  size_t size = 0;     // the size written
  std::vector<int64_t> sweep;
  int64_t sweep_max_length = 128;
  std::vector<std::string> reuse;  // resolved paths; then nothing is learned
  std::vector<std::string> user_tokens;
};
Result<VocabularyPlan> vocabulary_plan(const Pipeline& p, const StageSpec& spec);

struct LearnedVocabularies {
  std::vector<std::string> files;  // relative to the run directory: one, or source then target
  // The same vocabularies in memory, as written (so no step reads them back).
  std::vector<std::shared_ptr<const Vocabulary>> vocabularies;
  // Per file, the training units with their ids, when the file holds every
  // learned merge (else empty): the shard step starts its encoders from them.
  std::vector<LearnedUnits> units;
};

// The step: learns (or reuses), writes the vocabulary file(s), evaluates the
// sweep; adds outputs and a "vocabulary" section to the run record.
Result<std::unique_ptr<Step>> make_vocabulary_step(const Pipeline& p, const StageSpec& spec);

}  // namespace sheaf
