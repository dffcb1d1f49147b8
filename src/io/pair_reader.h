// PairReader: turns the corpus files into PairBatches.
//
// Layouts: "tsv" (source<TAB>target per line), "aligned" (two files, line N of
// one is the translation of line N of the other) and "jsonl" (one JSON object
// per line, the two sides in named string fields). Problems with one line drop
// that line with a reason code of stage "read" and the run goes on:
//   no-tab, extra-tab      a TSV line with no tab or more than one
//   nul-byte               a NUL byte in the line
//   line-too-long:N        the line had N bytes, more than max_line_bytes; its
//                          bytes go to the oversize sink, never into memory
//   bad-json, missing-field:NAME, not-a-string:NAME   (jsonl)
// Problems with the input as a whole (unreadable file, UTF-16, corrupt
// compression, two files of different lengths) are errors.
#pragma once

#include <functional>
#include <memory>
#include <string>
#include <vector>

#include "core/error.h"
#include "core/pair_batch.h"
#include "io/line_reader.h"
#include "pipeline/pipeline.h"

namespace sheaf {

struct InputInfo {
  std::string path;  // as given (after resolving against the pipeline file)
  uint64_t bytes = 0;
  uint64_t checksum = 0;
  std::string compression;
  uint64_t lines = 0;
};

class PairReader {
 public:
  // `paths` are the corpus files resolved to real paths.
  static Result<std::unique_ptr<PairReader>> open(const CorpusSpec& spec, const std::vector<std::string>& paths);

  // Appends up to `max_pairs` pairs (or about `max_bytes` of input) to an
  // empty batch. Returns false when the input is exhausted and nothing was read.
  Result<bool> next(PairBatch& batch, size_t max_pairs, size_t max_bytes);

  // Where the bytes of over-long lines go: side ("-" for one file, "source"
  // or "target" for two), line number, a piece of the line, last piece.
  using OversizeSink = std::function<Status(std::string_view side, uint64_t line, std::string_view bytes, bool last)>;
  void set_oversize_sink(const OversizeSink& sink);

  std::vector<InputInfo> inputs() const;
  uint64_t consumed() const;

 private:
  PairReader(const CorpusSpec& spec, std::vector<std::unique_ptr<LineReader>> readers, std::vector<std::string> paths)
      : spec_(spec), readers_(std::move(readers)), paths_(std::move(paths)) {}
  Status length_mismatch(int shorter);
  void parse_tsv(PairBatch& b, Pair& p, std::string_view line);
  void parse_jsonl(PairBatch& b, Pair& p, std::string_view line);

  CorpusSpec spec_;
  std::vector<std::unique_ptr<LineReader>> readers_;
  std::vector<std::string> paths_;
};

}  // namespace sheaf
