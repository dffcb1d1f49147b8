// RunRecord: everything one run did, written as manifest.json (the format is
// specified in docs/outputs.md). It holds no timestamps or host names, so two
// runs of the same input, pipeline and seed give the same bytes.
#pragma once

#include <cstdint>
#include <map>
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
  // Further sections of the record, each (key, serialized JSON value), in
  // the order the steps added them (vocabulary, shards...).
  std::vector<std::pair<std::string, std::string>> sections;
  std::map<std::string, SplitLengths> lengths;
};

std::string run_record_json(const RunRecord& r);
// The "corpora" list of the record (also copied into summary.json).
nlohmann::ordered_json corpora_json(const RunRecord& r);
// Reads the "outputs" list of a manifest, for --force, `sheaf inspect` and
// `sheaf stats`: a checked reader, which returns an error (never throws) for
// a file that is not a sheaf run record (no "format": "sheaf-run-record"), has
// a field of the wrong type, or lists a path outside its directory.
Result<std::vector<OutputEntry>> read_manifest_outputs(const std::string& path);

}  // namespace sheaf
