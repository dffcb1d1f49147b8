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
// Several corpora are read one after the other, in the order given; a batch
// holds pairs of one corpus, each pair carries its corpus's index, and line
// numbers count within each corpus.
#pragma once

#include <cstdint>
#include <functional>
#include <memory>
#include <string>
#include <vector>

#include "core/error.h"
#include "core/pair_batch.h"
#include "io/line_reader.h"
#include "config/pipeline.h"

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
  // Several corpora, read in this order; paths[i] are corpora[i]'s files.
  static Result<std::unique_ptr<PairReader>> open(const std::vector<CorpusSpec>& corpora,
                                                  const std::vector<std::vector<std::string>>& paths);

  // One part of a partitioned run (pipeline/spread.h): corpus `corpus`
  // only, its files whole when `whole`, else bytes [begin, end) of its one
  // uncompressed file, cut at line ends by the planner. Line numbers count
  // from 1 within the part; the reduce job adds the lines of the parts
  // before it.
  static Result<std::unique_ptr<PairReader>> open_part(const std::vector<CorpusSpec>& corpora,
                                                       const std::vector<std::vector<std::string>>& paths,
                                                       size_t corpus, bool whole, uint64_t begin, uint64_t end);

  // Appends up to `max_pairs` pairs (or about `max_bytes` of input) to an
  // empty batch. Returns false when the input is exhausted and nothing was read.
  Result<bool> next(PairBatch& batch, size_t max_pairs, size_t max_bytes);

  // Where the bytes of over-long lines go: the corpus's index, side ("-" for
  // one file, "source" or "target" for two), line number, a piece of the
  // line, last piece.
  using OversizeSink = std::function<Status(size_t corpus, std::string_view side, uint64_t line,
                                            std::string_view bytes, bool last)>;
  void set_oversize_sink(const OversizeSink& sink);

  std::vector<InputInfo> inputs() const;
  // The inputs of one corpus.
  std::vector<InputInfo> inputs(size_t corpus) const;
  uint64_t consumed() const;

 private:
  struct Source {
    CorpusSpec spec;
    std::vector<std::unique_ptr<LineReader>> readers;
    std::vector<std::string> paths;
  };
  explicit PairReader(std::vector<Source> sources) : sources_(std::move(sources)) {}
  Result<bool> next_from(Source& src, PairBatch& batch, size_t max_pairs, size_t max_bytes);
  static Status length_mismatch(Source& src, int shorter);
  static void parse_tsv(PairBatch& b, Pair& p, std::string_view line);
  static void parse_jsonl(const CorpusSpec& spec, PairBatch& b, Pair& p, std::string_view line);

  std::vector<Source> sources_;
  size_t current_ = 0;
  size_t stop_ = SIZE_MAX;  // one past the last corpus read
};

}  // namespace sheaf
