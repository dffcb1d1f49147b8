// summary.json and report.html are written from one typed struct
// (SummaryFigures); these tests build the struct by hand and check that the
// page and the JSON show the same figures. (The byte-for-byte check against
// the outputs recorded before the change is OutputsUnchanged.*.)
#include <gtest/gtest.h>

#include "report/figures.h"
#include "report/html_report.h"

namespace sheaf {
namespace {

RunRecord small_record() {
  RunRecord r;
  r.read = 1234567;
  r.kept = 1200000;
  r.rejected = 34567;
  StageCount read{"read", "read", 1234567, 1234567, {}, {}, {}};
  StageCount markup{"tags", "markup", 1234567, 1200000, {{"emptied", 4567}, {"markup", 30000}}, {}, {}};
  markup.counters = {{"rewritten:markup:source", 3}, {"changed:target", 0}, {"table_bytes", 99}};
  r.stages = {read, markup};
  r.splits = {{"train", 1199000}, {"dev", 1000}};
  r.overlaps = {{"train", "dev", 0}};
  return r;
}

HistFigures hist(uint64_t p99, double mean, std::vector<uint64_t> bins) {
  HistFigures h;
  h.dist.count = 10;
  h.dist.p99 = p99;
  h.dist.max = p99;
  h.mean = mean;
  h.bin_width = 2;
  h.bins = std::move(bins);
  return h;
}

SummaryFigures small_figures(const RunRecord& r) {
  SummaryFigures f;
  f.record = &r;
  for (const char* name : {"train", "dev"}) {
    SplitFigures s;
    s.name = name;
    s.pairs = name[0] == 't' ? 1199000 : 1000;
    s.side[0].chars = hist(87, 41.25, {1, 2, 3});
    s.side[0].words = hist(17, 7.5, {4, 5});
    s.side[1].chars = hist(95, 44.75, {1});
    s.side[1].words = hist(19, 8.25, {2});
    s.ratio = hist(150, 0.97, {0, 9});
    s.ratio.scale = 100;
    s.ratio.bin_width = 0.1;
    f.splits.push_back(s);
  }
  return f;
}

TEST(ReportFigures, PageAndJsonShowTheSameFigures) {
  RunRecord r = small_record();
  SummaryFigures f = small_figures(r);
  nlohmann::ordered_json j = summary_json(f);
  std::string html = render_report(f);

  EXPECT_EQ(j["counts"]["read"], 1234567u);
  EXPECT_NE(html.find("1,234,567 pairs read, <b>1,200,000</b> kept, 34,567 rejected."), std::string::npos);
  // The funnel row: drops by reason and the text changes that are not zero.
  EXPECT_NE(html.find("<td>tags</td><td>1,234,567</td><td>34,567</td><td style='text-align:left'>emptied 4,567, markup 30,000; "
                      "rewritten markup source 3</td>"),
            std::string::npos);
  // Split lengths: mean with one decimal, p99 as counted.
  EXPECT_EQ(j["splits"]["dev"]["source"]["chars"]["p99"], 87u);
  EXPECT_EQ(j["splits"]["dev"]["source"]["chars"]["mean"], 41.25);
  EXPECT_NE(html.find("<td>dev</td><td>1,000</td><td>source</td><td>41.2 / 87</td><td>7.5 / 17</td>"), std::string::npos);
  // The ratio is shown divided by its scale, without a sum.
  EXPECT_EQ(j["splits"]["dev"]["length_ratio"]["p99"], 1.5);
  EXPECT_FALSE(j["splits"]["dev"]["length_ratio"].contains("sum"));
  EXPECT_TRUE(j["splits"]["dev"]["source"]["chars"].contains("sum"));
  // No tokens without a shards step: dashes on the page, no key in the JSON.
  EXPECT_FALSE(j["splits"]["train"]["source"].contains("tokens"));
  EXPECT_NE(html.find("<td>–</td><td>–</td>"), std::string::npos);
  EXPECT_NE(html.find("No split shares a key with another."), std::string::npos);
  EXPECT_EQ(html.find("Vocabulary</h2>"), std::string::npos);
}

TEST(ReportFigures, TextChangesFromCountersAndFromJsonAgree) {
  std::vector<std::pair<std::string, uint64_t>> counters = {
      {"rewritten:markup:source", 3}, {"changed:target", 12}, {"changed:source", 0}, {"table_bytes", 7}};
  EXPECT_EQ(text_changes(counters), "rewritten markup source 3, changed target 12");
  nlohmann::ordered_json stage = {{"name", "n"}, {"counters", {{"rewritten:markup:source", 3}, {"changed:target", 12}}}};
  EXPECT_EQ(text_changes(stage), text_changes(counters));
  EXPECT_EQ(text_changes(nlohmann::ordered_json{{"name", "n"}}), "");
}

}  // namespace
}  // namespace sheaf
