// Tokenizer: text to token ids exactly as a run's shards hold them.
//
// A run's shards were encoded from text the pipeline had rewritten
// (normalization, pattern rewrites: stages/text_rules.h). A Tokenizer loads a
// run's vocabulary of one side together with its pipeline, and encodes any
// text through the same rewrites first, so that a model sees at inference
// the ids it was trained on. It also knows whether the run's shards wrap each
// side in begin/end-of-sequence ids (the shards stage's `bos` and `eos`).
//
// Loading: from a run directory (its pipeline.toml and vocab.shared.txt, or
// vocab.source.txt / vocab.target.txt for the side), or from a vocabulary
// file and the pipeline file the run was made with.
// Thread-safe: encode() and decode() may run on many threads at once.
#pragma once

#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include "core/error.h"
#include "pipeline/pipeline.h"
#include "stages/text_rules.h"
#include "subword/codec.h"
#include "subword/vocabulary.h"

namespace sheaf {

class Tokenizer {
 public:
  // `side`: 0 source, 1 target. `text_bytes` sizes the encoder's cache of
  // encoded words (0: a size for a few megabytes of text).
  static Result<std::unique_ptr<Tokenizer>> from_run(const std::string& run_dir, int side, uint64_t text_bytes = 0);
  static Result<std::unique_ptr<Tokenizer>> from_files(const std::string& vocab_file, const std::string& pipeline_file,
                                                       int side, uint64_t text_bytes = 0);

  // The text the pipeline would have written for `text` (see TextRules).
  std::string rewrite(std::string_view text) const;
  // Appends the ids of the rewritten text, wrapped as asked (`tag`: the id
  // of a user-defined token put first, after bos; -1 none); with
  // `dropout` > 0, BPE-dropout with that probability and `seed` (codec.h).
  void encode(std::string_view text, bool bos, bool eos, int64_t tag, std::vector<uint32_t>& out, double dropout = 0,
              uint64_t seed = 0) const;
  // Text of `ids`: stops at the first end-of-sequence id when `stop_at_eos`,
  // leaves special tokens out when `skip_special` (else writes their
  // spelling).
  std::string decode(const uint32_t* ids, size_t n, bool stop_at_eos, bool skip_special) const;

  const Vocabulary& vocabulary() const { return vocab_; }
  const Encoder& encoder() const { return *encoder_; }
  int side() const { return side_; }
  // Whether the run's shards put bos / eos around each side.
  bool shard_bos() const { return bos_; }
  bool shard_eos() const { return eos_; }
  // The user-defined token the shards put first on this side, or -1.
  int64_t shard_tag() const { return tag_; }
  const std::string& vocabulary_path() const { return vocab_path_; }

 private:
  Tokenizer() = default;
  static Result<std::unique_ptr<Tokenizer>> make(const std::string& vocab_file, Result<Pipeline> pipeline, int side,
                                                 uint64_t text_bytes);
  Pipeline pipeline_;
  TextRules rules_;
  Vocabulary vocab_;
  std::unique_ptr<Encoder> encoder_;
  std::string vocab_path_;
  int side_ = 0;
  bool bos_ = false, eos_ = false;
  int64_t tag_ = -1;
};

}  // namespace sheaf
