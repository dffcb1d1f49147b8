// Summary: the statistics of a run, written as summary.json and report.html
// at the end of every run (docs/outputs.md specifies both).
//
// Characters (code points), words (UAX #29) and the source/target length
// ratio per pair are exact histograms gathered in pass 1 as pairs are
// written; the alphabet coverage of dev and test takes one parallel scan of
// those (small) files; the token figures come from the shards step when it
// ran. The funnel, examples of rejections, the vocabulary and its size
// sweep, and the split overlap come from the run record.
#pragma once

#include <string>

#include <memory>

#include "run/step.h"

namespace sheaf {

inline constexpr int kSummaryFormat = 1;

// The closing step of every run: computes the summary, writes summary.json
// and report.html, lists both in the run record. Reads the vocabularies
// from the product "vocabulary" when the run has one.
std::unique_ptr<Step> make_summary_step();

// The compact text summary `sheaf run` prints at its end and `sheaf stats`
// prints again, from summary.json's content.
Result<std::string> summary_text(const std::string& summary_json);

}  // namespace sheaf
