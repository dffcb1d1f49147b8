// The registry of stage kinds: for each, its description (name, keys, role,
// and for steps what they need and provide) and how to build it.
//
// The built-in kinds are listed in registry.cc, in the order `sheaf init`
// writes them: cheap filters first, language identification (the slowest)
// last among filters, then the split, then the steps. A kind registered
// later (register_stage_kind) joins them for loading, checking and running;
// register before loading the pipeline that uses it, from one thread.
#pragma once

#include <memory>
#include <string_view>
#include <vector>

#include "config/pipeline.h"
#include "core/error.h"
#include "run/step.h"
#include "stages/stage.h"

namespace sheaf {

using StageFactory = Result<std::unique_ptr<Stage>> (*)(const StageContext&);
// Builds a step and checks its keys (without reading the corpus).
using StepFactory = Result<std::unique_ptr<Step>> (*)(const Pipeline&, const StageSpec&);

// Every kind, built-in first; the pointers stay valid for the process's life.
std::vector<const StageKind*> stage_kinds();
const StageKind* find_stage_kind(std::string_view kind);

// Adds a kind: a streaming stage (role kFilter or kSplit) with `make_stage`,
// or a step (role kStep, with its needs and provides) with `make_step`.
// An error if the name is taken or the factory does not match the role.
Status register_stage_kind(StageKind kind, StageFactory make_stage, StepFactory make_step);

// Builds the step a spec describes.
Result<std::unique_ptr<Step>> make_step(const Pipeline& p, const StageSpec& spec);

}  // namespace sheaf
