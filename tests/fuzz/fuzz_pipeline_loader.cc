// The pipeline-file loader on arbitrary text: an error or a pipeline whose
// resolved form loads again to the same resolved form.
#include <cstdio>
#include <cstdlib>
#include <string>

#include "fuzz_util.h"
#include "pipeline/pipeline.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  std::string text(reinterpret_cast<const char*>(data), size);
  auto p = sheaf::load_pipeline_text(text, "fuzz.toml");
  if (!p.ok()) {
    SHEAF_FUZZ_CHECK(!p.error().message().empty());
    return 0;
  }
  std::string r1 = sheaf::render_pipeline(*p);
  auto p2 = sheaf::load_pipeline_text(r1, "fuzz.toml");
  SHEAF_FUZZ_CHECK(p2.ok());
  SHEAF_FUZZ_CHECK(sheaf::render_pipeline(*p2) == r1);
  return 0;
}
