// exclude: keeps known evaluation data out of every split.
//
// Reads each listed file (plain, gzip, zstd, bzip2 or xz; TSV pairs or one sentence per
// line: every tab-separated field of a line is a sentence), passes every
// sentence through the rewrites of the stages before this one (so the list is
// compared after exactly the same normalization as the corpus), and drops any
// pair whose source, target or either side (`match`) equals a listed
// sentence. Reason code: excluded:SIDE. Sentences are held as 64-bit XXH3
// hashes. Thread-safe: the set is read-only after construction.
#pragma once

#include "stages/stage.h"

namespace sheaf {

const StageKind& exclude_kind();
Result<std::unique_ptr<Stage>> make_exclude(const StageContext& ctx);

}  // namespace sheaf
