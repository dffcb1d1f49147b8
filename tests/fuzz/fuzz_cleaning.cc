// The cleaning stages chained on arbitrary bytes: kept pairs have valid UTF-8
// sides without tab, CR or LF; every pair is kept or has a reason.
#include <cstdio>
#include <cstdlib>
#include <memory>
#include <string>
#include <vector>

#include "core/text.h"
#include "fuzz_util.h"
#include "pipeline/pipeline.h"
#include "stages/stage.h"

namespace {

struct Chain {
  std::unique_ptr<sheaf::Pipeline> pipeline;
  std::vector<std::unique_ptr<sheaf::Stage>> stages;
  Chain() {
    auto p = sheaf::load_pipeline_text(
        "sheaf = 1\n[corpus]\nfiles = [\"x\"]\nsource_lang = \"en\"\ntarget_lang = \"ru\"\n"
        "[[stage]]\nkind = \"normalize\"\nsource_form = \"nfkc\"\ninvalid_utf8 = \"replace\"\n"
        "[[stage]]\nkind = \"normalize\"\nname = \"n2\"\n[[stage]]\nkind = \"pattern\"\n"
        "[[stage]]\nkind = \"length\"\nmax_word_chars = 10\n[[stage]]\nkind = \"copy\"\n"
        "[[stage]]\nkind = \"script\"\n[[stage]]\nkind = \"dedup\"\nkey = \"loose\"\n",
        "fuzz.toml");
    if (!p.ok()) std::abort();
    pipeline = std::make_unique<sheaf::Pipeline>(std::move(p.value()));
    for (size_t i = 0; i < pipeline->stages.size(); ++i) {
      sheaf::StageContext ctx;
      ctx.pipeline = pipeline.get();
      ctx.spec = &pipeline->stages[i];
      ctx.index = static_cast<int>(i);
      auto s = sheaf::make_stage(ctx);
      if (!s.ok()) std::abort();
      stages.push_back(std::move(s.value()));
    }
  }
};

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  static Chain chain;
  sheaf::PairBatch b;
  b.raw.assign(reinterpret_cast<const char*>(data), size);
  std::string_view all(b.raw);
  uint64_t line = 0;
  while (!all.empty()) {
    size_t nl = all.find('\n');
    std::string_view l = all.substr(0, nl);
    size_t tab = l.find('\t');
    sheaf::Pair p;
    p.line = ++line;
    p.raw = l;
    p.text = {l.substr(0, tab), tab == std::string_view::npos ? std::string_view{} : l.substr(tab + 1)};
    b.pairs.push_back(p);
    if (nl == std::string_view::npos) break;
    all.remove_prefix(nl + 1);
  }
  for (auto& s : chain.stages) {
    s->map(b);
    if (s->has_reduce()) s->reduce(b);
  }
  for (const auto& p : b.pairs) {
    SHEAF_FUZZ_CHECK(p.kept() || !p.reason.empty());
    if (!p.kept()) continue;
    for (auto t : p.text) {
      SHEAF_FUZZ_CHECK(sheaf::is_valid_utf8(t));
      SHEAF_FUZZ_CHECK(t.find_first_of("\t\r\n") == std::string_view::npos);
    }
  }
  return 0;
}
