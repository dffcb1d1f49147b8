// The list of stage kinds, in the order `sheaf init` writes them: cheap
// filters first, language identification (the slowest) last among filters.
#include "pipeline/pipeline.h"
#include "stages/copy.h"
#include "stages/dedup.h"
#include "stages/exclude.h"
#include "stages/language.h"
#include "stages/length.h"
#include "stages/near_dup.h"
#include "stages/normalize.h"
#include "stages/pattern.h"
#include "stages/script.h"
#include "stages/shards.h"
#include "stages/split.h"
#include "stages/stage.h"
#include "stages/vocabulary.h"

namespace sheaf {

namespace {

using Factory = Result<std::unique_ptr<Stage>> (*)(const StageContext&);
struct Entry {
  const StageKind& kind;
  Factory make;
};

const std::vector<Entry>& entries() {
  static const std::vector<Entry> e = {
      {normalize_kind(), make_normalize}, {pattern_kind(), make_pattern}, {length_kind(), make_length},
      {copy_kind(), make_copy},           {script_kind(), make_script},   {dedup_kind(), make_dedup},
      {near_dup_kind(), make_near_dup},   {exclude_kind(), make_exclude},     {language_kind(), make_language},   {split_kind(), make_split},
      {vocabulary_kind(), nullptr},  // runs between passes (pipeline/steps.cc)
      {shards_kind(), nullptr},      // runs last (pipeline/steps.cc)
  };
  return e;
}

}  // namespace

const std::vector<StageKind>& stage_kinds() {
  static const std::vector<StageKind> kinds = [] {
    std::vector<StageKind> k;
    for (const auto& e : entries()) k.push_back(e.kind);
    return k;
  }();
  return kinds;
}

Status check_stages(const Pipeline& p) {
  std::vector<std::unique_ptr<Stage>> built;
  for (size_t i = 0; i < p.stages.size(); ++i) {
    const StageSpec& spec = p.stages[i];
    if (spec.kind->role == StageRole::kVocabulary) {
      auto plan = vocabulary_plan(p, spec);
      if (!plan.ok()) return plan.error();
      continue;
    }
    if (spec.kind->role != StageRole::kFilter && spec.kind->role != StageRole::kSplit) continue;
    StageContext ctx;
    ctx.pipeline = &p;
    ctx.spec = &spec;
    ctx.index = static_cast<int>(i);
    ctx.canonical = [&built](std::string& text, int side) {
      for (const auto& s : built)
        if (!s->rewrite(text, side)) return false;
      return true;
    };
    auto st = make_stage(ctx);
    if (!st.ok()) return st.error();
    built.push_back(std::move(st.value()));
  }
  return {};
}

Result<std::unique_ptr<Stage>> make_stage(const StageContext& ctx) {
  for (const auto& e : entries())
    if (e.kind.kind == ctx.spec->kind->kind && e.make) return e.make(ctx);
  return Error(ErrorKind::kInternal, "no factory for stage kind " + ctx.spec->kind->kind);
}

}  // namespace sheaf
