// The JSON Lines reader on arbitrary bytes.
#include <cstdio>
#include <cstdlib>

#include "fuzz_util.h"
#include "io/pair_reader.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  sheaf::fuzz::MemFile f(data, size);
  sheaf::CorpusSpec spec;
  spec.layout = sheaf::Layout::kJsonl;
  spec.source_field = "s";
  spec.target_field = "t";
  spec.max_line_bytes = 4096;
  auto r = sheaf::PairReader::open(spec, {f.path()});
  if (!r.ok()) return 0;
  uint64_t pairs = 0;
  for (;;) {
    sheaf::PairBatch b;
    auto more = (*r)->next(b, 5, 1 << 16);
    if (!more.ok() || !*more) break;
    for (const auto& p : b.pairs) {
      SHEAF_FUZZ_CHECK(p.line == ++pairs);
      SHEAF_FUZZ_CHECK(p.kept() || !p.reason.empty());
    }
  }
  return 0;
}
