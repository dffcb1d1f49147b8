// pattern: rules with RE2 patterns (linear time, so no pattern can hang a run).
//
// Each rule has a name, a pattern, the side(s) it applies to (source, target,
// both) and an action: "drop" drops a pair in which the pattern matches
// (reason code: the rule's name); "rewrite" replaces every match with
// `replacement` (RE2 rewrite syntax: \1 names a group) and then collapses
// spaces, so removing a tag leaves one space. Rules run in the order written.
// An invalid pattern is a pipeline-file error with RE2's message.
// Thread-safe: RE2 objects are safe for concurrent matching.
#pragma once

#include "stages/stage.h"

namespace sheaf {

const StageKind& pattern_kind();
Result<std::unique_ptr<Stage>> make_pattern(const StageContext& ctx);

}  // namespace sheaf
