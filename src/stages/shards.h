// shards: encodes every split into token-id shards (docs/shard-format.md).
//
// Not a streaming stage: it runs last, after the vocabulary, on each split's
// text file, in parallel over batches and written in order. A shard closes
// when it holds max_pairs pairs or max_bytes bytes of ids. Order "input"
// keeps the split file's order (so decoding the shards in turn gives the
// split file back, byte for byte); "length" sorts each shard's pairs by
// (source tokens, target tokens), stably, for batching by length. Optional
// begin/end-of-sequence ids wrap each side. Writes shards/SPLIT.NNNNN.shard
// and adds a "shards" section with token-length statistics to the record.
#pragma once

#include <string>
#include <vector>

#include "pipeline/steps.h"
#include "subword/trainer.h"

namespace sheaf {

const StageKind& shards_kind();

// `units`: per vocabulary file, its training units with their ids (trainer.h)
// or empty; the encoders start from them, so train is not encoded twice,
// and free them before encoding.
Status run_shards(const StepInput& in, const StageSpec& spec, const std::vector<std::string>& vocab_files,
                  std::vector<LearnedUnits> units, int threads);

}  // namespace sheaf
