// What `sheaf inspect` and `sheaf decode SHARD` do, as library functions.
#pragma once

#include <ostream>
#include <string>
#include <vector>

#include "core/error.h"
#include "subword/vocabulary.h"

namespace sheaf {

// Checks one shard and writes its header fields, counts and id ranges.
// Returns an error (after writing what it could) when the shard is damaged.
Status inspect_shard(const std::string& path, std::ostream& out);

// Checks every file a run record lists (size and checksum) and every shard's
// structure; writes one line per file. Error if anything does not match.
Status inspect_run(const std::string& dir, std::ostream& out);

// The vocabularies (source, target) a shard was written with: given
// explicitly (one file for both sides, or two), or found beside the shard
// (in its run directory) by their checksums.
Result<std::vector<Vocabulary>> vocabularies_for_shard(const std::string& shard, const std::vector<std::string>& given);

// Writes the shard's pairs as TSV text (specials left out).
Status decode_shard(const std::string& path, const std::vector<Vocabulary>& vocabs, std::ostream& out);

}  // namespace sheaf
