// RunRecord: everything one run did, written as manifest.json (the format is
// specified in docs/outputs.md). It holds no timestamps or host names, so two
// runs of the same input, pipeline and seed give the same bytes.
#pragma once

#include <cstdint>
#include <map>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include <nlohmann/json.hpp>

#include "io/pair_reader.h"
#include "core/stats.h"

namespace sheaf {

inline constexpr int kRunRecordFormat = 1;

struct StageCount {
  std::string name;
  std::string kind;
  uint64_t in = 0, out = 0;
  std::map<std::string, uint64_t> reasons;  // reason code (before ':') -> pairs
  // The first few rejections per reason code: (input line, full reason,
  // the start of the original line), for the summary.
  struct Example {
    uint64_t line;
    std::string reason, text;
  };
  std::map<std::string, std::vector<Example>> examples;
  std::vector<std::pair<std::string, uint64_t>> counters;
};

struct OutputEntry {
  std::string path;  // relative to the run directory, '/' separated
  std::string kind;  // text, rejected, vocabulary, shard, summary, report
  std::string split;
  std::string side;
  uint64_t records = 0, size = 0, checksum = 0;
};

struct Overlap {
  std::string a, b;
  uint64_t keys = 0;  // keys of b also found in a
};

// One named corpus's share of the run (named corpora only; its rows add up
// to the run's totals).
struct CorpusCount {
  std::string name, layout;
  double weight = 1.0;
  bool held_out = true;
  std::vector<InputInfo> inputs;
  uint64_t read = 0, kept = 0, rejected = 0;
  std::vector<uint64_t> stage_out;  // pairs out of each entry of RunRecord::stages
  std::map<std::string, uint64_t> reasons;  // "stage/code" -> pairs
  std::map<std::string, uint64_t> splits;   // split name -> pairs
};

// Lengths of the kept pairs of one split, gathered while they are written
// (for summary.json; not part of manifest.json).
struct SplitLengths {
  Histogram chars[2], words[2];
  Histogram ratio;  // 100 x source chars / target chars, floored (bins, percentiles)
  double ratio_sum = 0;  // the exact ratios' sum (the mean), added in output order
};

// The vocabulary step's report: manifest.json's and summary.json's
// "vocabulary" (docs/outputs.md).
struct SweepRow {  // one vocabulary size measured on the sweep split
  int64_t size = 0;
  uint64_t effective_size = 0;
  Distribution tokens;  // tokens per sentence
  uint64_t token_total = 0;
  double tokens_per_word = 0, over_max_length = 0, byte_token_rate = 0, unknown_rate = 0;
};
struct VocabularyEntry {  // one vocabulary file
  std::string side, file;
  uint64_t size = 0, alphabet = 0;
  double alphabet_coverage = 0;
  uint64_t merges = 0, learned_merges = 0;
  bool stopped_early = false;
  std::string reused_from;  // empty when learned here; then the three counts below
  uint64_t word_types = 0, word_units = 0, distinct_characters = 0;
  std::vector<std::pair<std::string, std::vector<SweepRow>>> sweep;  // "source"/"target" -> rows
};
struct ReusedVocabulary {
  std::string side, file;
  uint64_t checksum = 0;
  // The run that learned it, when the file sits in one: that run's
  // summary.json and, per side, its figures (name, value) at this size.
  bool has_old_run = false;
  std::string old_summary;
  std::vector<std::pair<std::string, std::vector<std::pair<std::string, double>>>> old_figures;
};
struct VocabularyReport {
  std::string stage;
  bool shared = true;
  uint64_t size = 0, learned_up_to = 0;
  std::string sweep_split;
  bool reuse = false;  // then `reused` names the files
  std::vector<ReusedVocabulary> reused;
  std::vector<VocabularyEntry> vocabularies;
};

// The shard step's report: manifest.json's "shards", and the token lengths
// in summary.json.
struct TokenLengths {  // one side of one split
  Histogram lengths;   // ids per pair, as written
  uint64_t tokens = 0, byte_tokens = 0, unknown = 0;  // of the pairs in the shards
  uint64_t dropped_words = 0;  // words of the split file's pairs a token limit left out
};
struct ShardSplit {
  std::string split;
  TokenLengths side[2];
  uint32_t shards = 0;
};
struct ShardsReport {
  std::string stage;
  uint32_t id_width = 2;
  std::string order;
  bool bos = false, eos = true;
  std::vector<ShardSplit> splits;
  // Tokens (other than special and byte tokens) no train pair uses: per
  // side with separate vocabularies, else one figure (unused[0]).
  bool separate = false;
  uint64_t unused[2] = {0, 0};
};

struct RunRecord {
  std::string tool_version = SHEAF_VERSION;
  uint64_t pipeline_hash = 0;
  std::string layout;
  std::vector<InputInfo> inputs;
  uint64_t read = 0, kept = 0, rejected = 0;
  std::vector<CorpusCount> corpora;  // named corpora only, in priority order
  std::vector<StageCount> stages;  // "read" first, "output" last
  std::vector<std::pair<std::string, uint64_t>> splits;
  std::vector<Overlap> overlaps;
  std::vector<OutputEntry> outputs;
  std::string stopped_after;  // --until, empty when the whole pipeline ran
  // The steps' reports, when they ran.
  std::optional<VocabularyReport> vocabulary;
  std::optional<ShardsReport> shards;
  std::map<std::string, SplitLengths> lengths;
};

std::string run_record_json(const RunRecord& r);
// One stage's counts: name, kind, in, out, rejected, (examples,) counters.
nlohmann::ordered_json stage_count_json(const StageCount& s, bool examples);
// The steps' reports as JSON (manifest.json and summary.json).
nlohmann::ordered_json vocabulary_json(const VocabularyReport& v);
nlohmann::ordered_json shards_json(const ShardsReport& s);
// The figures of one token-length side: the distribution, byte and unknown
// tokens and their rate.
double byte_token_rate(const TokenLengths& t);
// The "corpora" list of the record (also copied into summary.json).
nlohmann::ordered_json corpora_json(const RunRecord& r);
// Reads the "outputs" list of a manifest, for --force, `sheaf inspect` and
// `sheaf stats`: a checked reader, which returns an error (never throws) for
// a file that is not a sheaf run record (no "format": "sheaf-run-record"), has
// a field of the wrong type, or lists a path outside its directory.
Result<std::vector<OutputEntry>> read_manifest_outputs(const std::string& path);

}  // namespace sheaf
