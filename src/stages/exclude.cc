#include "stages/exclude.h"

#include <xxhash.h>

#include <unordered_set>

#include "io/line_reader.h"

namespace sheaf {

namespace {

class ExcludeStage : public Stage {
 public:
  ExcludeStage(const StageContext& ctx, std::unordered_set<uint64_t> set[2], bool side[2])
      : index_(ctx.index) {
    for (int s = 0; s < 2; ++s) {
      set_[s] = std::move(set[s]);
      side_[s] = side[s];
    }
  }
  void map(PairBatch& batch) override {
    for (Pair& p : batch.pairs) {
      for (int s = 0; s < 2 && p.kept(); ++s) {
        if (!side_[s]) continue;
        if (set_[s].count(XXH3_64bits(p.text[s].data(), p.text[s].size())))
          batch.drop(p, index_, std::string("excluded:") + side_name(s));
      }
    }
  }
  std::vector<std::pair<std::string, uint64_t>> counters() const override {
    return {{"listed_source_sentences", set_[0].size()}, {"listed_target_sentences", set_[1].size()}};
  }
  bool counter_adds(std::string_view) const override { return false; }  // the lists' sizes

 private:
  int index_;
  std::unordered_set<uint64_t> set_[2];
  bool side_[2];
};

}  // namespace

const StageKind& exclude_kind() {
  static const StageKind k{
      "exclude",
      "drops pairs that hold a sentence of a known evaluation set (keeps test data out of training)",
      StageRole::kFilter,
      {
          {"files", FieldType::kStringList, std::vector<std::string>{},
           "files of sentences to keep out (TSV pairs or one per line; plain, gzip, zstd, bzip2 or xz)"},
          {"match", FieldType::kChoice, std::string("either"), "which side of a pair is compared: source, target or either",
           0, 0, {"source", "target", "either"}},
      }};
  return k;
}

Result<std::unique_ptr<Stage>> make_exclude(const StageContext& ctx) {
  const Params& p = ctx.spec->params;
  const std::string& match = p.text("match");
  bool side[2] = {match != "target", match != "source"};
  std::unordered_set<uint64_t> set[2];
  for (const auto& f : ctx.text_rules_only ? std::vector<std::string>{} : p.list("files")) {
    std::string path = ctx.pipeline->resolve(f);
    auto src = open_byte_source(path);
    if (!src.ok()) return src.error();
    LineReader reader(std::move(src.value()), 1 << 20);
    Line line;
    for (;;) {
      auto more = reader.next(line);
      if (!more.ok()) return more.error();
      if (!*more) break;
      std::string_view rest = line.text;
      while (true) {
        size_t tab = rest.find('\t');
        std::string_view field = rest.substr(0, tab);
        for (int s = 0; s < 2; ++s) {
          if (!side[s]) continue;
          std::string text(field);
          if (ctx.canonical && !ctx.canonical(text, s)) continue;
          if (!text.empty()) set[s].insert(XXH3_64bits(text.data(), text.size()));
        }
        if (tab == std::string_view::npos) break;
        rest.remove_prefix(tab + 1);
      }
    }
  }
  return std::unique_ptr<Stage>(std::make_unique<ExcludeStage>(ctx, set, side));
}

}  // namespace sheaf
