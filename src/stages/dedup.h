// dedup: keeps the first occurrence of each pair (or side) in input order.
//
// Scope "pair" (default) compares whole pairs, "source" or "target" one side.
// Key "exact" hashes the text as it stands after earlier stages; "loose" first
// lowercases and removes punctuation, symbols, digits and spaces, so pairs
// that differ only in those are duplicates. Hashes are XXH3 64-bit (default)
// or 128-bit; see docs/pipeline.md for the collision bound.
// Reason code: duplicate:N, N = the input line of the kept occurrence
// (CORPUS:N with named corpora; corpora are read in priority order, so the
// kept occurrence is the one from the highest-priority corpus).
// map() hashes in parallel; reduce() looks the hashes up in input order.
#pragma once

#include <string>
#include <string_view>

#include "stages/stage.h"

namespace sheaf {

enum class DedupScope { kPair, kSource, kTarget };

// The text a loose key is computed from (lowercased; no punctuation,
// symbols, digits or spaces). Exposed for tests.
std::string loose_key(std::string_view text);

const StageKind& dedup_kind();
Result<std::unique_ptr<Stage>> make_dedup(const StageContext& ctx);

}  // namespace sheaf
