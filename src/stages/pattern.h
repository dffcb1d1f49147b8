// pattern: HTML markup out of both sides alike, then rules with RE2 patterns
// (linear time, so no pattern can hang a run).
//
// markup = "strip" (default): the tags stages/markup.h finds are replaced by
// a space on both sides when both sides hold the same tags (element and
// kind, in any order); otherwise the pair is dropped (markup:unpaired), so a
// rewrite never changes what one side says and not the other. Entities are
// decoded on each side. markup = "keep" leaves both alone.
//
// Each rule has a name, a pattern, the side(s) it applies to (source, target,
// both) and an action: "drop" drops a pair in which the pattern matches
// (reason code: the rule's name); "rewrite" replaces every match with
// `replacement` (RE2 rewrite syntax: \1 names a group) and then collapses
// spaces, so removing a tag leaves one space. Rules run in the order written.
// An invalid pattern is a pipeline-file error with RE2's message. A rewrite
// (markup or rule) that would leave a side empty drops the pair
// (emptied:SIDE). Counters: rewritten:markup:SIDE, rewritten:entities:SIDE,
// rewritten:RULE:SIDE (pairs whose side was changed).
// Thread-safe: RE2 objects are safe for concurrent matching.
#pragma once

#include "stages/stage.h"

namespace sheaf {

const StageKind& pattern_kind();
Result<std::unique_ptr<Stage>> make_pattern(const StageContext& ctx);

}  // namespace sheaf
