// The vocabulary loader on arbitrary bytes: an error, or a vocabulary that
// serializes back to the same bytes.
#include <cstdio>
#include <cstdlib>
#include <string>

#include "fuzz_util.h"
#include "subword/vocabulary.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  std::string text(reinterpret_cast<const char*>(data), size);
  auto v = sheaf::Vocabulary::parse(text, "fuzz");
  if (!v.ok()) return 0;
  auto again = sheaf::Vocabulary::parse(v->serialize(), "fuzz");
  SHEAF_FUZZ_CHECK(again.ok());
  SHEAF_FUZZ_CHECK(again->serialize() == v->serialize());
  return 0;
}
