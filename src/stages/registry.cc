// The registry of stage kinds (registry.h).
#include "stages/registry.h"

#include <deque>

#include "stages/copy.h"
#include "stages/dedup.h"
#include "stages/exclude.h"
#include "stages/language.h"
#include "stages/length.h"
#include "stages/near_dup.h"
#include "stages/normalize.h"
#include "stages/pattern.h"
#include "stages/per_corpus.h"
#include "stages/script.h"
#include "stages/shards.h"
#include "stages/split.h"
#include "stages/vocabulary.h"

namespace sheaf {

namespace {

struct Entry {
  StageKind kind;
  StageFactory make_stage = nullptr;
  StepFactory make_step = nullptr;
};

// A deque: registering a kind never moves the others (StageSpec::kind
// points into it).
std::deque<Entry>& entries() {
  static std::deque<Entry> e = [] {
    std::deque<Entry> d;
    d.push_back({normalize_kind(), make_normalize, nullptr});
    d.push_back({pattern_kind(), make_pattern, nullptr});
    d.push_back({length_kind(), make_length, nullptr});
    d.push_back({copy_kind(), make_copy, nullptr});
    d.push_back({script_kind(), make_script, nullptr});
    d.push_back({dedup_kind(), make_dedup, nullptr});
    d.push_back({near_dup_kind(), make_near_dup, nullptr});
    d.push_back({exclude_kind(), make_exclude, nullptr});
    d.push_back({language_kind(), make_language, nullptr});
    d.push_back({split_kind(), make_split, nullptr});
    d.push_back({vocabulary_kind(), nullptr, make_vocabulary_step});
    d.push_back({shards_kind(), nullptr, make_shards_step});
    return d;
  }();
  return e;
}

const Entry* find_entry(std::string_view kind) {
  for (const auto& e : entries())
    if (e.kind.kind == kind) return &e;
  return nullptr;
}

}  // namespace

std::vector<const StageKind*> stage_kinds() {
  std::vector<const StageKind*> k;
  for (const auto& e : entries()) k.push_back(&e.kind);
  return k;
}

const StageKind* find_stage_kind(std::string_view kind) {
  const Entry* e = find_entry(kind);
  return e != nullptr ? &e->kind : nullptr;
}

Status register_stage_kind(StageKind kind, StageFactory make_stage, StepFactory make_step) {
  if (find_entry(kind.kind) != nullptr)
    return Error(ErrorKind::kInternal, "stage kind \"" + kind.kind + "\" is registered twice");
  bool step = kind.role == StageRole::kStep;
  if (step ? (make_step == nullptr || make_stage != nullptr) : (make_stage == nullptr || make_step != nullptr))
    return Error(ErrorKind::kInternal, "stage kind \"" + kind.kind + "\": a step needs a step factory, a streaming stage a stage factory");
  entries().push_back({std::move(kind), make_stage, make_step});
  return {};
}

Result<std::unique_ptr<Stage>> make_stage(const StageContext& ctx) {
  const Entry* e = find_entry(ctx.spec->kind->kind);
  if (e == nullptr || e->make_stage == nullptr)
    return Error(ErrorKind::kInternal, "no stage factory for kind " + ctx.spec->kind->kind);
  return e->make_stage(ctx);
}

Result<std::unique_ptr<Step>> make_step(const Pipeline& p, const StageSpec& spec) {
  const Entry* e = find_entry(spec.kind->kind);
  if (e == nullptr || e->make_step == nullptr)
    return Error(ErrorKind::kInternal, "no step factory for kind " + spec.kind->kind);
  return e->make_step(p, spec);
}

Result<std::vector<std::unique_ptr<Stage>>> build_streaming_stages(const Pipeline& p) {
  // Each stage knows only the rewrites before it (`canonical` is called
  // while a stage is built, never later).
  std::vector<std::unique_ptr<Stage>> built;
  for (size_t i = 0; i < p.stages.size(); ++i) {
    const StageSpec& spec = p.stages[i];
    if (spec.kind->role == StageRole::kStep) break;  // the loader put every step after the streaming stages
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
    // Each corpus's own keys for the stage, built as the run builds them.
    if (st.ok() && p.named_corpora) st = with_corpus_variants(ctx, std::move(st.value()));
    if (!st.ok()) return st.error();
    built.push_back(std::move(st.value()));
  }
  return built;
}

Status check_stages(const Pipeline& p) {
  auto built = build_streaming_stages(p);
  if (!built.ok()) return built.error();
  for (size_t i = built->size(); i < p.stages.size(); ++i) {
    auto step = make_step(p, p.stages[i]);
    if (!step.ok()) return step.error();
  }
  return {};
}

}  // namespace sheaf
