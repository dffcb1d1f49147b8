// report.html: one self-contained page (inline SVG and CSS, no scripts, no
// network) drawn from the summary's typed figures (the same struct that
// summary.json is written from, never its text): the funnel, token-length histograms per
// side, the length-ratio histogram, the size-sweep curves and key tables.
#pragma once

#include <cstdint>
#include <string>
#include <utility>
#include <vector>

#include <nlohmann/json.hpp>

#include "report/figures.h"

namespace sheaf {

std::string render_report(const SummaryFigures& figures);

// The text changes a stage counted (its counters named rewritten:RULE:SIDE
// and changed:SIDE that are not zero), as "rewritten markup source 3,
// changed target 12"; empty if none. From the record's counters, or from a
// funnel entry of summary.json (for `sheaf stats`; a counter that is not a
// number throws nlohmann::json::exception, which the caller's checked reader
// turns into an error value).
std::string text_changes(const std::vector<std::pair<std::string, uint64_t>>& counters);
std::string text_changes(const nlohmann::ordered_json& stage);

}  // namespace sheaf
