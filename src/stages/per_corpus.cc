#include "stages/per_corpus.h"

#include <algorithm>

namespace sheaf {

namespace {

class PerCorpusStage : public Stage {
 public:
  // stages_[0] is the stage as written; pick_[c] is the stage of corpus c,
  // or -1 when corpus c skips it.
  PerCorpusStage(std::vector<std::unique_ptr<Stage>> stages, std::vector<std::unique_ptr<StageSpec>> specs,
                 std::vector<int> pick, std::vector<std::string> labels)
      : stages_(std::move(stages)), specs_(std::move(specs)), pick_(std::move(pick)), labels_(std::move(labels)) {}

  void map(PairBatch& batch) override {
    if (Stage* s = stage_for(batch)) s->map(batch);
  }
  bool has_reduce() const override {
    return std::any_of(stages_.begin(), stages_.end(), [](const auto& s) { return s->has_reduce(); });
  }
  void reduce(PairBatch& batch) override {
    Stage* s = stage_for(batch);
    if (s && s->has_reduce()) s->reduce(batch);
  }
  bool rewrite(std::string& text, int side) const override { return stages_[0]->rewrite(text, side); }
  std::vector<std::pair<std::string, uint64_t>> counters() const override {
    std::vector<std::pair<std::string, uint64_t>> out;
    for (size_t i = 0; i < stages_.size(); ++i)
      for (auto& [k, v] : stages_[i]->counters()) out.emplace_back(labels_[i] + k, v);
    return out;
  }
  bool counter_adds(std::string_view name) const override {
    for (size_t i = stages_.size(); i-- > 0;)  // the corpus labels first: "" matches every name
      if (name.substr(0, labels_[i].size()) == labels_[i]) return stages_[i]->counter_adds(name.substr(labels_[i].size()));
    return true;
  }
  Status finish() override {
    for (auto& s : stages_) SHEAF_TRY(s->finish());
    return {};
  }

 private:
  Stage* stage_for(const PairBatch& b) const {
    if (b.pairs.empty()) return nullptr;
    int i = pick_[b.pairs.front().corpus];
    return i < 0 ? nullptr : stages_[static_cast<size_t>(i)].get();
  }
  std::vector<std::unique_ptr<Stage>> stages_;
  std::vector<std::unique_ptr<StageSpec>> specs_;  // the variants' specs, which their stages may point to
  std::vector<int> pick_;
  std::vector<std::string> labels_;  // counter prefix per stage: "" for the stage as written, "CORPUS."
};

}  // namespace

Result<std::unique_ptr<Stage>> with_corpus_variants(const StageContext& ctx, std::unique_ptr<Stage> stage) {
  const Pipeline& p = *ctx.pipeline;
  const std::string& name = ctx.spec->name;
  std::vector<std::unique_ptr<Stage>> stages;
  std::vector<std::unique_ptr<StageSpec>> specs;
  std::vector<int> pick(p.corpora.size(), 0);
  std::vector<std::string> labels = {""};
  bool differs = false;
  for (size_t c = 0; c < p.corpora.size(); ++c) {
    const CorpusSpec& cs = p.corpora[c];
    if (std::find(cs.skip.begin(), cs.skip.end(), name) != cs.skip.end()) {
      pick[c] = -1;
      differs = true;
      continue;
    }
    for (const auto& [stage, params] : cs.stage_params) {
      if (stage != name) continue;
      auto spec = std::make_unique<StageSpec>(*ctx.spec);
      spec->params = params;
      StageContext vctx = ctx;
      vctx.spec = spec.get();
      auto made = make_stage(vctx);
      if (!made.ok()) return made.error();
      if (stages.empty()) stages.push_back(nullptr);  // slot 0: the stage as written
      pick[c] = static_cast<int>(stages.size());
      stages.push_back(std::move(made.value()));
      specs.push_back(std::move(spec));
      labels.push_back(cs.name + ".");
      differs = true;
    }
  }
  if (!differs) return stage;
  if (stages.empty()) stages.push_back(nullptr);
  stages[0] = std::move(stage);
  return std::unique_ptr<Stage>(
      std::make_unique<PerCorpusStage>(std::move(stages), std::move(specs), std::move(pick), std::move(labels)));
}

}  // namespace sheaf
