// SummaryFigures: the typed content of summary.json and report.html. The
// summary step fills it once from the run record (and one scan of the small
// splits for alphabet coverage); summary.json is its JSON, written once, and
// report.html is drawn from the same struct, so the page never reads the
// text back (docs/outputs.md specifies both).
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include <nlohmann/json.hpp>

#include "core/stats.h"
#include "run/run_record.h"

namespace sheaf {

// One fixed-bin histogram of summary.json: its distribution, shown divided
// by `scale` (the length ratio is counted as 100 × the ratio, shown as the
// ratio), and its bins.
struct HistFigures {
  Distribution dist;   // of the values as counted
  double scale = 1.0;  // 1: shown as counted (integers); else divided, without "sum"
  double mean = 0;     // the mean shown (the ratio's is the exact mean of the ratios)
  double bin_width = 0;  // in shown units
  std::vector<uint64_t> bins;
};

struct TokenFigures {  // one side of one split in the shards
  HistFigures lengths;
  double byte_token_rate = 0;
  uint64_t unknown = 0;
  double tokens_per_word = 0;
};

struct SideFigures {
  HistFigures chars, words;
  std::optional<TokenFigures> tokens;  // when the shards step ran
};

struct SplitFigures {
  std::string name;
  uint64_t pairs = 0;
  SideFigures side[2];  // source, target
  HistFigures ratio;    // source / target characters
};

struct SummaryFigures {
  const RunRecord* record = nullptr;  // counts, funnel, corpora, overlaps, vocabulary, stopped_after
  std::vector<SplitFigures> splits;   // in the record's split order
  // Alphabet coverage of the splits other than train: (split, [(side, share)]).
  std::vector<std::pair<std::string, std::vector<std::pair<std::string, double>>>> coverage;
};

// summary.json's content.
nlohmann::ordered_json summary_json(const SummaryFigures& f);

}  // namespace sheaf
