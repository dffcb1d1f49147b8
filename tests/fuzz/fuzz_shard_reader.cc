// The shard reader on arbitrary bytes: an error, or a shard whose every id
// can be read within bounds.
#include <cstdio>
#include <cstdlib>
#include <vector>

#include "fuzz_util.h"
#include "shards/shard_reader.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  sheaf::fuzz::MemFile f(data, size);
  auto r = sheaf::ShardReader::open(f.path());
  if (!r.ok()) return 0;
  std::vector<uint32_t> ids;
  uint64_t total[2] = {0, 0};
  for (uint64_t i = 0; i < r->pairs(); ++i)
    for (int s = 0; s < 2; ++s) {
      r->ids(i, s, ids);
      total[s] += ids.size();
    }
  SHEAF_FUZZ_CHECK(total[0] == r->header().source_count);
  SHEAF_FUZZ_CHECK(total[1] == r->header().target_count);
  return 0;
}
