// End to end through the sheaf binary: nothing is lost, the run record is
// true, outputs do not depend on the thread count, the output directory is
// handled safely.
#include <gtest/gtest.h>
#include <xxhash.h>

#include <nlohmann/json.hpp>

#include <map>
#include <set>

#include "test_util.h"

namespace sheaf {
namespace {

using nlohmann::json;

std::string demo_corpus() { return test::source_dir() + "/samples/garden-en-es.tsv"; }

// Runs the demo pipeline on the sample corpus into `out`.
test::Ran run_demo(const std::string& out, const std::string& extra = "") {
  return test::run_sheaf("run " + test::source_dir() + "/pipelines/demo.toml --quiet --out " + out + " " + extra);
}

std::vector<std::string> input_lines(const std::string& path) {
  std::string s = test::read_file(path);
  if (s.rfind("\xEF\xBB\xBF", 0) == 0) s.erase(0, 3);
  auto lines = test::lines_of(s);
  for (auto& l : lines)
    if (!l.empty() && l.back() == '\r') l.pop_back();
  return lines;
}

TEST(Run, NothingIsLostAndEveryRejectedLineIsRecoverable) {
  test::TempDir t;
  auto r = run_demo(t / "run");
  ASSERT_EQ(r.status, 0) << r.err;
  json m = json::parse(test::read_file(t / "run/manifest.json"));
  uint64_t read = m["counts"]["read"], kept = m["counts"]["kept"], rejected = m["counts"]["rejected"];
  auto input = input_lines(demo_corpus());
  EXPECT_EQ(read, input.size());
  EXPECT_EQ(read, kept + rejected);
  uint64_t in_splits = 0;
  for (auto& [name, n] : m["splits"].items()) in_splits += n.get<uint64_t>();
  EXPECT_EQ(in_splits, kept);
  // Every rejected row holds its input line byte for byte.
  auto rows = test::lines_of(test::read_file(t / "run/rejected.tsv"));
  EXPECT_EQ(rows.size(), rejected);
  std::set<uint64_t> seen;
  for (const auto& row : rows) {
    size_t a = row.find('\t'), b = row.find('\t', a + 1), c = row.find('\t', b + 1), d = row.find('\t', c + 1);
    ASSERT_NE(d, std::string::npos) << row;
    uint64_t line = std::stoull(row.substr(0, a));
    EXPECT_EQ(row.substr(c + 1, d - c - 1), "-");
    ASSERT_LE(line, input.size());
    EXPECT_EQ(row.substr(d + 1), input[line - 1]) << "line " << line;
    EXPECT_TRUE(seen.insert(line).second);
  }
  // Per stage: in - out = rejections by reason; the chain is consistent.
  uint64_t prev_out = read;
  for (const auto& s : m["stages"]) {
    uint64_t by_reason = 0;
    for (auto& [k, v] : s["rejected"].items()) by_reason += v.get<uint64_t>();
    EXPECT_EQ(s["in"].get<uint64_t>() - s["out"].get<uint64_t>(), by_reason) << s["name"];
    EXPECT_EQ(s["in"].get<uint64_t>(), prev_out) << s["name"];
    prev_out = s["out"];
  }
  EXPECT_EQ(prev_out, kept);
}

TEST(Run, SplitFilesAreValidTsvAndTheManifestChecksumsMatch) {
  test::TempDir t;
  ASSERT_EQ(run_demo(t / "run").status, 0);
  json m = json::parse(test::read_file(t / "run/manifest.json"));
  EXPECT_EQ(m["format"], "sheaf-run-record");
  EXPECT_EQ(m["complete"], true);
  std::set<std::string> kinds;
  for (const auto& o : m["outputs"]) {
    std::string bytes = test::read_file(t / ("run/" + o["path"].get<std::string>()));
    EXPECT_EQ(bytes.size(), o["size"].get<uint64_t>()) << o["path"];
    char hex[17];
    std::snprintf(hex, sizeof hex, "%016llx", static_cast<unsigned long long>(XXH3_64bits(bytes.data(), bytes.size())));
    EXPECT_EQ(o["xxh3_64"], hex) << o["path"];
    kinds.insert(o["kind"]);
    if (o["kind"] == "text") {
      auto lines = test::lines_of(bytes);
      EXPECT_EQ(lines.size(), o["records"].get<uint64_t>());
      for (const auto& l : lines) {
        EXPECT_EQ(std::count(l.begin(), l.end(), '\t'), 1) << l;
        EXPECT_EQ(l.find('\r'), std::string::npos);
      }
    }
  }
  EXPECT_TRUE(kinds.count("text") && kinds.count("rejected"));
  // The input is described by its size and checksum.
  std::string in = test::read_file(demo_corpus());
  ASSERT_EQ(m["inputs"].size(), 1u);
  EXPECT_EQ(m["inputs"][0]["size"].get<uint64_t>(), in.size());
}

TEST(Run, OutputsAreIdenticalAtAnyThreadCount) {
  test::TempDir t;
  ASSERT_EQ(run_demo(t / "one", "--threads 1").status, 0);
  ASSERT_EQ(run_demo(t / "four", "--threads 4").status, 0);
  json m = json::parse(test::read_file(t / "one/manifest.json"));
  for (const auto& o : m["outputs"]) {
    std::string rel = o["path"];
    EXPECT_EQ(test::read_file(t / ("one/" + rel)), test::read_file(t / ("four/" + rel))) << rel;
  }
  EXPECT_EQ(test::read_file(t / "one/manifest.json"), test::read_file(t / "four/manifest.json"));
}

TEST(Run, StandardInputGivesTheSameOutputs) {
  test::TempDir t;
  ASSERT_EQ(run_demo(t / "file").status, 0);
  auto r = test::run_shell("cat " + demo_corpus() + " | " + test::binary() + " run " + test::source_dir() +
                           "/pipelines/demo.toml --quiet --input - --out " + (t / "stdin"));
  ASSERT_EQ(r.status, 0) << r.err;
  for (const char* f : {"train.tsv", "dev.tsv", "test.tsv", "rejected.tsv"})
    EXPECT_EQ(test::read_file(t / ("file/" + std::string(f))), test::read_file(t / ("stdin/" + std::string(f)))) << f;
}

TEST(Run, RefusesAForeignDirectoryAndForceRemovesOnlyListedFiles) {
  test::TempDir t;
  test::write_file(t / "run/notes.txt", "mine");
  auto r = run_demo(t / "run");
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("not a sheaf run"), std::string::npos) << r.err;
  EXPECT_FALSE(test::fs::exists(t / "run/manifest.json"));
  auto f = run_demo(t / "run", "--force");
  ASSERT_EQ(f.status, 0) << f.err;
  EXPECT_EQ(test::read_file(t / "run/notes.txt"), "mine");
  // A previous run is replaced without --force; foreign files stay.
  test::write_file(t / "run/train.tsv", "stale");
  ASSERT_EQ(run_demo(t / "run").status, 0);
  EXPECT_NE(test::read_file(t / "run/train.tsv"), "stale");
  EXPECT_EQ(test::read_file(t / "run/notes.txt"), "mine");
}

TEST(Run, ForceNeverFollowsListedPathsOutOfTheDirectory) {
  test::TempDir t;
  test::write_file(t / "victim.txt", "keep");
  // A record listing paths outside its directory is not one sheaf wrote: the
  // directory is refused and nothing is touched.
  test::write_file(t / "run/manifest.json",
                   "{\"format\":\"sheaf-run-record\",\"tool\":\"sheaf\",\"outputs\":[{\"path\":\"../victim.txt\"},{\"path\":\"" + (t / "victim.txt") +
                       "\"}]}");
  EXPECT_EQ(run_demo(t / "run").status, 2);
  EXPECT_EQ(test::read_file(t / "victim.txt"), "keep");
  // A listed path inside the directory that passes through a link is not followed.
  test::write_file(t / "run2/manifest.json",
                   "{\"format\":\"sheaf-run-record\",\"tool\":\"sheaf\",\"outputs\":[{\"path\":\"link/x\"}]}");
  test::fs::create_directory_symlink(t.path(), t / "run2/link");
  test::write_file(t / "x", "keep too");
  ASSERT_EQ(run_demo(t / "run2").status, 0);
  EXPECT_EQ(test::read_file(t / "x"), "keep too");
}

TEST(Run, UntilStopsAfterTheStageAndRecordsIt) {
  test::TempDir t;
  auto r = run_demo(t / "run", "--until length");
  ASSERT_EQ(r.status, 0) << r.err;
  json m = json::parse(test::read_file(t / "run/manifest.json"));
  EXPECT_EQ(m["complete"], false);
  EXPECT_EQ(m["stopped_after"], "length");
  std::vector<std::string> names;
  for (const auto& s : m["stages"]) names.push_back(s["name"]);
  EXPECT_EQ(names, (std::vector<std::string>{"read", "normalize", "pattern", "length", "output"}));
  EXPECT_EQ(m["splits"].size(), 1u);
  EXPECT_EQ(m["splits"]["train"].get<uint64_t>(), m["counts"]["kept"].get<uint64_t>());
  auto bad = run_demo(t / "run2", "--until lenght");
  EXPECT_EQ(bad.status, 2);
  EXPECT_NE(bad.err.find("did you mean \"length\""), std::string::npos) << bad.err;
}

TEST(Run, SetOverridesAKeyOfANamedStage) {
  test::TempDir t;
  ASSERT_EQ(run_demo(t / "a").status, 0);
  ASSERT_EQ(run_demo(t / "b", "--set length.source_max=5").status, 0);
  json a = json::parse(test::read_file(t / "a/manifest.json")), b = json::parse(test::read_file(t / "b/manifest.json"));
  EXPECT_LT(b["counts"]["kept"].get<uint64_t>(), a["counts"]["kept"].get<uint64_t>());
  EXPECT_NE(a["pipeline_hash"], b["pipeline_hash"]);
}

TEST(Run, InitWritesAPipelineThatRunsWithNoEdits) {
  test::TempDir t;
  auto init = test::run_sheaf("init --input " + demo_corpus() + " --from en --to es --out " + (t / "out"));
  ASSERT_EQ(init.status, 0) << init.err;
  test::write_file(t / "p.toml", init.out);
  auto v = test::run_sheaf("validate " + (t / "p.toml"));
  ASSERT_EQ(v.status, 0) << v.err;
  auto r = test::run_sheaf("run " + (t / "p.toml") + " --quiet");
  ASSERT_EQ(r.status, 0) << r.err;
  json m = json::parse(test::read_file(t / "out/manifest.json"));
  EXPECT_GT(m["counts"]["kept"].get<uint64_t>(), 500u);
}

TEST(Run, ExitStatusesAndOneLineMessages) {
  test::TempDir t;
  test::write_file(t / "bad.toml", "sheaf = 1\n[corpus]\nfiels = []\n");
  auto v = test::run_sheaf("validate " + (t / "bad.toml"));
  EXPECT_EQ(v.status, 2);
  EXPECT_EQ(v.err, "sheaf: " + (t / "bad.toml") + ":3:1: unknown key \"fiels\" in [corpus] (did you mean \"files\"?)\n");
  test::write_file(t / "p.toml", test::pipeline_text("files = [\"missing.tsv\"]", ""));
  auto r = test::run_sheaf("run " + (t / "p.toml") + " --quiet");
  EXPECT_EQ(r.status, 1);
  EXPECT_NE(r.err.find("missing.tsv: cannot open input"), std::string::npos) << r.err;
  EXPECT_FALSE(test::fs::exists(t / "out/manifest.json"));
  EXPECT_EQ(test::run_sheaf("run").status, 2);
  EXPECT_EQ(test::run_sheaf("frobnicate").status, 2);
}

}  // namespace
}  // namespace sheaf
