// Outputs that a change of structure must not alter.
//
// Every pipeline of pipelines/ and tests/bench/ runs on the samples, and
// every file of its run directory (the run record included; not the lock
// and the cleanup marker) is compared,
// by size and XXH3-64, with tests/unit/outputs-unchanged.txt, written before
// the runner and its steps were redesigned. A change that means to alter
// outputs (a new default, a format change) rewrites that file on purpose:
//   SHEAF_OUTPUTS_REWRITE=1 build/tests/sheaf_tests --gtest_filter='OutputsUnchanged.*'
// and says so in its commit message, so each kind of change can be checked
// apart. The 200 MB benchmark corpus is compared by tests/bench/run.sh
// --compare (it is too large for a test).
#include <gtest/gtest.h>
#include <xxhash.h>

#include <algorithm>
#include <cstdio>
#include <filesystem>
#include <map>
#include <sstream>

#include "test_util.h"

namespace sheaf::test {
namespace {

struct Case {
  std::string name;
  std::string command;  // run from the source folder; OUT is replaced by the run directory
};

std::vector<Case> cases() {
  const std::string garden = "samples/garden-en-es.tsv";
  const std::string run = " --quiet --force --threads 2 --out OUT";
  return {
      {"demo", "BIN run pipelines/demo.toml" + run},
      {"demo-separate", "BIN run pipelines/demo.toml --set vocabulary.shared='\"separate\"'" + run},
      {"clean-only", "BIN run pipelines/clean-only.toml" + run},
      {"multi-corpus", "BIN run pipelines/multi-corpus.toml" + run},
      // Russian is not in the samples: the same pipeline over the Spanish
      // sample, its target language changed, keeps its separate
      // vocabularies, length order and begin/end ids.
      {"en-ru-separate",
       "sed 's/target_lang = \"ru\"/target_lang = \"es\"/' pipelines/en-ru-separate.toml > TMP/en-es.toml && "
       "cp " + garden + " TMP/garden.tsv && cd TMP && "
       "BIN run en-es.toml --input garden.tsv --set split.dev=150 --set split.test=150 "
       "--set vocabulary.size=1200 --set vocabulary.sweep='[600, 1200]'" + run},
      // Run from their own folder, so that no path in the record depends
      // on where the test runs. Source from standard input, target zstd-compressed, an exclusion
      // list gzip-compressed.
      {"large-stdin",
       "mkdir -p TMP/eval && cut -f2 " + garden + " | zstd -q -c > TMP/corpus.es.zst && "
       "sed -n '100,140p' " + garden + " | gzip -n -c > TMP/eval/test-sets.tsv.gz && "
       "cp pipelines/large-stdin.toml TMP/ && cut -f1 " + garden + " > TMP/source.txt && cd TMP && "
       "BIN run large-stdin.toml < source.txt --set split.dev=200 --set split.test=200 "
       "--set vocabulary.size=1500 --set vocabulary.sweep='[1000, 1500]'" + run},
      {"bench-clean", "BIN run tests/bench/clean.toml --input " + garden + run},
      {"bench-clean-language", "BIN run tests/bench/clean-language.toml --input " + garden + run},
      {"bench-clean-near-dup", "BIN run tests/bench/clean-near-dup.toml --input " + garden + run},
      {"bench-full", "BIN run tests/bench/full.toml --input " + garden + " --set vocabulary.size=2000" + run},
  };
}

std::string replace_all(std::string s, const std::string& from, const std::string& to) {
  for (size_t at = s.find(from); at != std::string::npos; at = s.find(from, at + to.size())) s.replace(at, from.size(), to);
  return s;
}

// "CASE<TAB>PATH<TAB>SIZE<TAB>XXH3" for every file of a run directory, sorted by path.
std::vector<std::string> describe(const std::string& name, const std::string& dir) {
  std::vector<std::string> rows;
  for (const auto& e : fs::recursive_directory_iterator(dir)) {
    if (!e.is_regular_file()) continue;
    std::string rel = fs::relative(e.path(), dir).string();
    if (rel[0] == '.') continue;  // the lock and the cleanup marker are housekeeping
    std::string bytes = read_file(e.path().string());
    char hex[17];
    std::snprintf(hex, sizeof hex, "%016llx", static_cast<unsigned long long>(XXH3_64bits(bytes.data(), bytes.size())));
    rows.push_back(name + "\t" + rel + "\t" + std::to_string(bytes.size()) + "\t" + hex);
  }
  std::sort(rows.begin(), rows.end());
  return rows;
}

TEST(OutputsUnchanged, EveryPipelineOnTheSamples) {
  const std::string golden = source_dir() + "/tests/unit/outputs-unchanged.txt";
  std::vector<std::string> got;
  for (const Case& c : cases()) {
    TempDir tmp;
    std::string cmd = replace_all(c.command, "BIN", binary());
    cmd = replace_all(cmd, "OUT", tmp / "run");
    cmd = replace_all(cmd, "TMP", tmp.path());
    Ran r = run_shell("cd " + source_dir() + " && " + cmd);
    ASSERT_EQ(r.status, 0) << c.name << ": " << cmd << "\n" << r.err;
    auto rows = describe(c.name, tmp / "run");
    ASSERT_GT(rows.size(), 3u) << c.name;
    got.insert(got.end(), rows.begin(), rows.end());
  }
  const char* rewrite = std::getenv("SHEAF_OUTPUTS_REWRITE");
  if (rewrite != nullptr && std::string(rewrite) == "1") {
    std::string text = "# case\tpath\tbytes\txxh3-64 (tests/unit/outputs_unchanged_test.cc)\n";
    for (const auto& row : got) text += row + "\n";
    write_file(golden, text);
    GTEST_SKIP() << "rewrote " << golden;
  }
  std::vector<std::string> want;
  for (const auto& line : lines_of(read_file(golden)))
    if (!line.empty() && line[0] != '#') want.push_back(line);
  // Row by row, so a failure names the files that changed.
  std::map<std::string, std::string> w, g;
  auto key = [](const std::string& row) { return row.substr(0, row.find('\t', row.find('\t') + 1)); };
  for (const auto& row : want) w[key(row)] = row;
  for (const auto& row : got) g[key(row)] = row;
  for (const auto& [k, row] : w) EXPECT_EQ(g.count(k) ? g[k] : std::string("(missing)"), row);
  for (const auto& [k, row] : g) EXPECT_TRUE(w.count(k)) << "new file: " << row;
}

}  // namespace
}  // namespace sheaf::test
