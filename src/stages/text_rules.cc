#include "stages/text_rules.h"

namespace sheaf {

Result<TextRules> TextRules::build(const Pipeline& p) {
  TextRules r;
  r.stages_ = std::make_unique<std::vector<std::unique_ptr<Stage>>>();
  for (size_t i = 0; i < p.stages.size(); ++i) {
    const StageSpec& spec = p.stages[i];
    if (spec.kind->role != StageRole::kFilter) break;
    StageContext ctx;
    ctx.pipeline = &p;
    ctx.spec = &spec;
    ctx.index = static_cast<int>(i);
    ctx.text_rules_only = true;
    const auto* built = r.stages_.get();
    ctx.canonical = [built](std::string& text, int side) {
      for (const auto& s : *built)
        if (!s->rewrite(text, side)) return false;
      return true;
    };
    auto st = make_stage(ctx);
    if (!st.ok()) return st.error();
    r.stages_->push_back(std::move(st.value()));
  }
  return r;
}

bool TextRules::apply(std::string& text, int side) const {
  bool kept = true;
  if (!stages_) return kept;
  for (const auto& s : *stages_) kept = s->rewrite(text, side) && kept;
  return kept;
}

}  // namespace sheaf
