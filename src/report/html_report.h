// report.html: one self-contained page (inline SVG and CSS, no scripts, no
// network) drawn from summary.json: the funnel, token-length histograms per
// side, the length-ratio histogram, the size-sweep curves and key tables.
#pragma once

#include <string>

namespace sheaf {

std::string render_report(const std::string& summary_json);

}  // namespace sheaf
