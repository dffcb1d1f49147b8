// split: proportions, reproducibility, stability under growth, no leakage.
#include <gtest/gtest.h>

#include <nlohmann/json.hpp>

#include <algorithm>
#include <cmath>
#include <map>
#include <random>
#include <set>

#include "stage_util.h"
#include "stages/split.h"
#include "test_util.h"

namespace sheaf {
namespace {

using nlohmann::json;

std::vector<std::pair<std::string, std::string>> synthetic(size_t n, size_t first = 0) {
  std::vector<std::pair<std::string, std::string>> out;
  for (size_t i = first; i < first + n; ++i)
    out.emplace_back("source sentence " + std::to_string(i), "frase " + std::to_string(i));
  return out;
}

// Splits `pairs` with the stage and returns each pair's split index.
std::vector<int> assign(const std::string& toml, const std::vector<std::pair<std::string, std::string>>& pairs) {
  test::StageHarness h(toml);
  EXPECT_TRUE(h.ok()) << h.error();
  auto& st = static_cast<SplitStage&>(h.stage());
  std::vector<int> out;
  for (const auto& [s, t] : pairs) {
    Pair p;
    p.text = {s, t};
    out.push_back(st.assign(st.group_hash(st.key_text(p))));
  }
  return out;
}

// Two-sided 99.9% interval of Binomial(n, f) by the normal approximation:
// n f ± z sqrt(n f (1 - f)) with z = 3.2905 (the 0.9995 quantile of the
// standard normal; a standard result, e.g. any statistics table).
TEST(Split, FractionsFollowTheBinomialDistribution) {
  const size_t n = 100000;
  const double f_dev = 0.01, f_test = 0.02, z = 3.2905;
  auto pairs = synthetic(n);
  for (int seed = 1; seed <= 20; ++seed) {
    auto a = assign("kind = \"split\"\ndev = 0.01\ntest = 0.02\nseed = " + std::to_string(seed), pairs);
    size_t c[3] = {0, 0, 0};
    for (int s : a) ++c[s];
    for (auto [count, f] : {std::pair{c[1], f_dev}, std::pair{c[2], f_test}, std::pair{c[0], 1 - f_dev - f_test}}) {
      double mean = n * f, half = z * std::sqrt(n * f * (1 - f));
      EXPECT_GE(static_cast<double>(count), mean - half) << "seed " << seed << " f " << f;
      EXPECT_LE(static_cast<double>(count), mean + half) << "seed " << seed << " f " << f;
    }
  }
}

TEST(Split, SeedChangesTheAssignment) {
  auto pairs = synthetic(2000);
  EXPECT_NE(assign("kind = \"split\"\ndev = 0.1\nseed = 1", pairs), assign("kind = \"split\"\ndev = 0.1\nseed = 2", pairs));
  EXPECT_EQ(assign("kind = \"split\"\ndev = 0.1\nseed = 1", pairs), assign("kind = \"split\"\ndev = 0.1\nseed = 1", pairs));
}

TEST(Split, FractionModeIsStableUnderGrowth) {
  auto pairs = synthetic(10000);
  auto before = assign("kind = \"split\"\ndev = 0.05\ntest = 0.05", pairs);
  auto grown = pairs;
  auto more = synthetic(1000, 10000);
  grown.insert(grown.end(), more.begin(), more.end());
  auto after = assign("kind = \"split\"\ndev = 0.05\ntest = 0.05", grown);
  EXPECT_TRUE(std::equal(before.begin(), before.end(), after.begin()));
}

TEST(Split, KeysKeepGroupsTogether) {
  std::vector<std::pair<std::string, std::string>> pairs;
  for (int i = 0; i < 3000; ++i) pairs.emplace_back("shared " + std::to_string(i % 300), "target " + std::to_string(i));
  auto a = assign("kind = \"split\"\ndev = 0.1\ntest = 0.1", pairs);
  std::map<std::string, std::set<int>> where;
  for (size_t i = 0; i < pairs.size(); ++i) where[pairs[i].first].insert(a[i]);
  for (const auto& [s, splits] : where) EXPECT_EQ(splits.size(), 1u) << s;
  // key = "target" groups by target instead: the sources then spread out.
  auto t = assign("kind = \"split\"\ndev = 0.1\ntest = 0.1\nkey = \"target\"", pairs);
  std::map<std::string, std::set<int>> by_source;
  for (size_t i = 0; i < pairs.size(); ++i) by_source[pairs[i].first].insert(t[i]);
  size_t spread = 0;
  for (const auto& [s, splits] : by_source) spread += splits.size() > 1;
  EXPECT_GT(spread, 100u);
}

TEST(Split, ExtraSplitsAndValidation) {
  auto a = assign("kind = \"split\"\ndev = 0.1\ntest = 0.1\nextra = [{ name = \"test2\", size = 0.1 }]", synthetic(20000));
  size_t c[4] = {0, 0, 0, 0};
  for (int s : a) ++c[s];
  for (int i = 1; i < 4; ++i) EXPECT_NEAR(static_cast<double>(c[i]), 2000.0, 200.0);
  test::StageHarness mixed("kind = \"split\"\ndev = 0.1\ntest = 500");
  EXPECT_FALSE(mixed.ok());
  EXPECT_NE(mixed.error().find("mix fractions and counts"), std::string::npos);
  test::StageHarness full("kind = \"split\"\ndev = 0.6\ntest = 0.5");
  EXPECT_FALSE(full.ok());
  test::StageHarness dup("kind = \"split\"\nextra = [{ name = \"dev\", size = 0.1 }]");
  EXPECT_FALSE(dup.ok());
}

// Count mode runs through the runner (it spools pairs until the end).
struct Corpus {
  test::TempDir dir;
  std::string pipeline;
  explicit Corpus(const std::vector<std::pair<std::string, std::string>>& pairs, const std::string& split) {
    std::string tsv;
    for (const auto& [s, t] : pairs) tsv += s + "\t" + t + "\n";
    test::write_file(dir / "c.tsv", tsv);
    pipeline = dir / "p.toml";
    test::write_file(pipeline, test::pipeline_text("files = [\"c.tsv\"]\nsource_lang = \"en\"\ntarget_lang = \"es\"",
                                                   "[[stage]]\nkind = \"normalize\"\n[[stage]]\nkind = \"split\"\n" + split));
  }
  test::Ran run(const std::string& out, const std::string& extra = "") {
    return test::run_sheaf("run " + pipeline + " --quiet --out " + (dir / out) + " " + extra);
  }
  std::vector<std::string> lines(const std::string& out, const std::string& split) {
    return test::lines_of(test::read_file(dir / (out + "/" + split + ".tsv")));
  }
};

TEST(Split, CountModeGivesExactCountsForSingletonGroups) {
  Corpus c(synthetic(5000), "dev = 300\ntest = 200");
  auto r = c.run("out");
  ASSERT_EQ(r.status, 0) << r.err;
  EXPECT_EQ(c.lines("out", "dev").size(), 300u);
  EXPECT_EQ(c.lines("out", "test").size(), 200u);
  EXPECT_EQ(c.lines("out", "train").size(), 4500u);
  EXPECT_FALSE(test::fs::exists(c.dir / "out/split-spool.bin"));
}

TEST(Split, CountModeIsOffByLessThanAGroup) {
  std::vector<std::pair<std::string, std::string>> pairs;
  for (int i = 0; i < 6000; ++i) pairs.emplace_back("group " + std::to_string(i / 3), "t " + std::to_string(i));
  Corpus c(pairs, "dev = 100\ntest = 100");
  ASSERT_EQ(c.run("out").status, 0);
  for (const char* s : {"dev", "test"}) {
    size_t n = c.lines("out", s).size();
    EXPECT_GE(n, 100u) << s;
    EXPECT_LE(n, 102u) << s;  // at most the group size (3) minus one over
  }
}

TEST(Split, SameMembershipAtAnyThreadCountAndInputOrder) {
  auto pairs = synthetic(4000);
  for (int i = 0; i < 4000; i += 7) pairs.emplace_back(pairs[static_cast<size_t>(i)].first, "otra " + std::to_string(i));
  for (const std::string mode : {"dev = 0.05\ntest = 0.05", "dev = 150\ntest = 150"}) {
    Corpus c(pairs, mode);
    auto shuffled = pairs;
    std::mt19937 rng(5);
    std::shuffle(shuffled.begin(), shuffled.end(), rng);
    Corpus d(shuffled, mode);
    ASSERT_EQ(c.run("t1", "--threads 1").status, 0);
    ASSERT_EQ(c.run("t4", "--threads 4").status, 0);
    ASSERT_EQ(d.run("sh", "--threads 2").status, 0);
    for (const char* s : {"train", "dev", "test"}) {
      EXPECT_EQ(test::read_file(c.dir / ("t1/" + std::string(s) + ".tsv")),
                test::read_file(c.dir / ("t4/" + std::string(s) + ".tsv")));
      auto a = c.lines("t1", s), b = d.lines("sh", s);
      std::sort(a.begin(), a.end());
      std::sort(b.begin(), b.end());
      EXPECT_EQ(a, b) << s << " (" << mode << ")";
    }
  }
}

TEST(Split, NoSourceSitsInTwoSplitsAndTheRecordSaysSo) {
  std::vector<std::pair<std::string, std::string>> pairs;
  for (int i = 0; i < 8000; ++i) pairs.emplace_back("repeated " + std::to_string(i % 500), "variant " + std::to_string(i));
  Corpus c(pairs, "dev = 0.05\ntest = 0.05");
  ASSERT_EQ(c.run("out").status, 0);
  std::map<std::string, std::set<std::string>> where;
  for (const char* s : {"train", "dev", "test"})
    for (const auto& l : c.lines("out", s)) where[l.substr(0, l.find('\t'))].insert(s);
  for (const auto& [src, splits] : where) EXPECT_EQ(splits.size(), 1u) << src;
  json m = json::parse(test::read_file(c.dir / "out/manifest.json"));
  ASSERT_EQ(m["split_overlap"].size(), 3u);
  for (const auto& o : m["split_overlap"]) EXPECT_EQ(o["shared_keys"], 0) << o.dump();
  EXPECT_EQ(m["splits"]["dev"].get<size_t>() + m["splits"]["test"].get<size_t>() + m["splits"]["train"].get<size_t>(),
            8000u);
}

TEST(Split, DemoRunReportsZeroOverlap) {
  test::TempDir t;
  auto r = test::run_sheaf("run " + test::source_dir() + "/pipelines/demo.toml --quiet --out " + (t / "d"));
  ASSERT_EQ(r.status, 0) << r.err;
  json m = json::parse(test::read_file(t / "d/manifest.json"));
  for (const char* s : {"train", "dev", "test"}) EXPECT_GT(m["splits"][s].get<size_t>(), 0u) << s;
  for (const auto& o : m["split_overlap"]) EXPECT_EQ(o["shared_keys"], 0);
}

}  // namespace
}  // namespace sheaf
