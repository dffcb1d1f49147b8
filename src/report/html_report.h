// report.html: one self-contained page (inline SVG and CSS, no scripts, no
// network) drawn from summary.json: the funnel, token-length histograms per
// side, the length-ratio histogram, the size-sweep curves and key tables.
#pragma once

#include <string>

namespace sheaf {

std::string render_report(const std::string& summary_json);

// The text changes a funnel stage of summary.json counted (its counters
// named rewritten:RULE:SIDE and changed:SIDE that are not zero), as
// "rewritten markup source 3, changed target 12"; empty if none.
std::string text_changes(const std::string& stage_json);

}  // namespace sheaf
