// The line and TSV reader on arbitrary bytes: every line becomes exactly one
// pair, kept with two sides or dropped with a reason; nothing is lost.
#include <cstdio>
#include <cstdlib>

#include "fuzz_util.h"
#include "io/pair_reader.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  sheaf::fuzz::MemFile f(data, size);
  sheaf::CorpusSpec spec;
  spec.layout = sheaf::Layout::kTsv;
  spec.max_line_bytes = 64;
  auto r = sheaf::PairReader::open(spec, {f.path()});
  if (!r.ok()) return 0;
  uint64_t pairs = 0;
  for (;;) {
    sheaf::PairBatch b;
    auto more = (*r)->next(b, 7, 1 << 16);
    if (!more.ok() || !*more) break;
    for (const auto& p : b.pairs) {
      SHEAF_FUZZ_CHECK(p.line == ++pairs);
      SHEAF_FUZZ_CHECK(p.kept() || !p.reason.empty());
      // The raw line keeps a byte-order mark at the start of the stream (line
      // 1); the text does not.
      size_t bom = p.line == 1 && p.raw.starts_with("\xEF\xBB\xBF") ? 3 : 0;
      if (p.kept()) {
        SHEAF_FUZZ_CHECK(p.text[0].size() + p.text[1].size() + 1 + bom == p.raw.size());
        SHEAF_FUZZ_CHECK(p.raw.substr(bom, p.text[0].size()) == p.text[0]);
      }
    }
  }
  return 0;
}
