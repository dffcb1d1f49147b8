// shards: encodes every split into token-id shards (docs/shard-format.md).
//
// A step (run/step.h) that needs "splits" and "vocabulary" and provides
// "shards": it runs after the vocabulary step, on each split's text file, in parallel over batches and written in order. A shard closes
// when it holds max_pairs pairs or max_bytes bytes of ids. Order "input"
// keeps the split file's order (so decoding the shards in turn gives the
// split file back, byte for byte); "length" sorts each shard's pairs by
// (source tokens, target tokens), stably, for batching by length. Optional
// begin/end-of-sequence ids wrap each side. Writes shards/SPLIT.NNNNN.shard
// and adds a "shards" section with token-length statistics to the record.
#pragma once

#include <string>
#include <vector>

#include <memory>

#include "config/pipeline.h"
#include "run/step.h"

namespace sheaf {

const StageKind& shards_kind();

// The step. The encoders start from the vocabulary step's training units
// (trainer.h), so train is not encoded twice, and free them before encoding.
Result<std::unique_ptr<Step>> make_shards_step(const Pipeline& p, const StageSpec& spec);

}  // namespace sheaf
