// The partitioned run (sheaf spread, docs/cluster.md): the same pipeline
// cut into map jobs and a reduce job writes every file byte for byte as
// `sheaf run` does; a map job re-run after a failure changes nothing; a
// damaged or stale part is refused; the Slurm scripts chain the jobs, and,
// where a cluster answers (scripts/slurm-local start), a submitted run gives
// the same files.
#include <gtest/gtest.h>

#include <algorithm>
#include <chrono>
#include <cstring>
#include <set>
#include <thread>

#include <fcntl.h>
#include <signal.h>
#include <unistd.h>
#include <sys/wait.h>

#include <xxhash.h>

#include "test_util.h"

namespace sheaf::test {
namespace {

// Every regular file of `a` and `b` (not the lock and housekeeping files,
// whose names start with '.'), compared byte for byte; the differences, or
// "" when the two directories hold the same files.
std::string differences(const std::string& a, const std::string& b) {
  std::string out;
  std::set<std::string> names;
  for (const auto* dir : {&a, &b})
    for (const auto& e : fs::recursive_directory_iterator(*dir))
      if (e.is_regular_file() && fs::relative(e.path(), *dir).string()[0] != '.')
        names.insert(fs::relative(e.path(), *dir).string());
  for (const auto& n : names) {
    if (!fs::exists(a + "/" + n) || !fs::exists(b + "/" + n))
      out += n + ": only in one\n";
    else if (read_file(a + "/" + n) != read_file(b + "/" + n))
      out += n + ": differs\n";
  }
  return names.empty() ? "no files" : out;
}

// `sheaf run ARGS` and `sheaf spread local ARGS --parts N`, from `cwd`.
std::string run_both(const std::string& cwd, const std::string& args, int parts, const TempDir& t,
                     const std::string& tag, size_t* planned = nullptr, const std::string& spread_only = "") {
  std::string one = t / (tag + "-one"), spread = t / (tag + "-spread"), work = t / (tag + "-work");
  Ran r = run_shell("cd " + cwd + " && " + binary() + " run " + args + " --quiet --force --threads 2 --out " + one);
  if (r.status != 0) return "run failed: " + r.err;
  Ran s = run_shell("cd " + cwd + " && " + binary() + " spread local " + args + spread_only + " --parts " + std::to_string(parts) +
                    " --work " + work + " --jobs 2 --threads 1 --quiet --force --out " + spread);
  if (s.status != 0) return "spread failed: " + s.err;
  if (planned) {
    *planned = 0;
    for (const auto& e : fs::directory_iterator(work + "/parts")) *planned += e.path().extension() == ".json";
  }
  return differences(one, spread);
}

TEST(Spread, TheDemoIsTheSameAtOneFourAndSixteenParts) {
  TempDir t;
  for (int parts : {1, 4, 16}) {
    size_t made = 0;
    EXPECT_EQ(run_both(source_dir(), "pipelines/demo.toml", parts, t, std::to_string(parts), &made), "")
        << parts << " parts";
    EXPECT_EQ(made, static_cast<size_t>(parts));  // one uncompressed file: cut into as many as asked
  }
}

TEST(Spread, EverySamplePipelineIsTheSame) {
  TempDir t;
  // Deduplication by 3 bucket jobs, by as many as parts (the default), and
  // in the reduce job.
  EXPECT_EQ(run_both(source_dir(), "pipelines/demo.toml", 5, t, "b3", nullptr, " --buckets 3"), "");
  EXPECT_EQ(run_both(source_dir(), "pipelines/demo.toml", 5, t, "b0", nullptr, " --buckets 0"), "");
  std::string garden = source_dir() + "/samples/garden-en-es.tsv";
  std::string in = " --set corpus.files='[\"" + garden + "\"]'";
  EXPECT_EQ(run_both(source_dir(), "pipelines/multi-corpus.toml", 9, t, "multi"), "");
  EXPECT_EQ(run_both(source_dir(), "pipelines/clean-only.toml", 5, t, "clean"), "");
  EXPECT_EQ(run_both(source_dir(), "pipelines/demo.toml --set vocabulary.shared='\"separate\"'", 3, t, "sep"), "");
  EXPECT_EQ(run_both(source_dir(), "tests/bench/clean-near-dup.toml" + in, 6, t, "near"), "");
  EXPECT_EQ(run_both(source_dir(), "tests/bench/full.toml" + in + " --set vocabulary.size=2000", 6, t, "full"), "");
}

// Cuts fall between lines of every kind: a byte-order mark on line 1, CRLF
// ends, lines over max_line_bytes (streamed to rejected-long.tsv), NUL
// bytes, a line without a tab, a CR inside a line, no LF at the end.
TEST(Spread, CutsAtLineEndsLoseNothingOnHostileLines) {
  TempDir t;
  std::string text = "\xEF\xBB\xBFthe first line\tla primera l\xC3\xADnea\r\n";
  for (int i = 0; i < 600; ++i) {
    std::string n = std::to_string(i);
    switch (i % 7) {
      case 0: text += "a line numbered " + n + "\tuna l\xC3\xADnea " + n + "\r\n"; break;
      case 1: text += std::string(300 + i, 'x') + "\t" + std::string(10, 'y') + "\n"; break;  // over the cap
      case 2: text += "nul" + std::string(1, '\0') + n + "\tx\n"; break;
      case 3: text += "no tab here " + n + "\n"; break;
      case 4: text += "a CR\rinside " + n + "\tdentro " + n + "\n"; break;
      default: text += "plain pair " + n + " of words\tpar sencillo " + n + " de palabras\n"; break;
    }
  }
  text += "the last line\tla \xC3\xBAltima";  // no LF
  write_file(t / "corpus.tsv", text);
  write_file(t / "p.toml", pipeline_text("layout = \"tsv\"\nfiles = [\"corpus.tsv\"]\nmax_line_bytes = 256",
                                         "[[stage]]\nkind = \"normalize\"\n[[stage]]\nkind = \"dedup\"\n"
                                         "[[stage]]\nkind = \"split\"\ndev = 0.1\ntest = 0.1\n"));
  for (int parts : {2, 7, 31}) EXPECT_EQ(run_both(t.path(), "p.toml", parts, t, std::to_string(parts)), "") << parts;
  // The over-long lines are all there, once each.
  std::string longs = read_file(t / "31-spread/rejected-long.tsv");
  EXPECT_EQ(std::count(longs.begin(), longs.end(), '\n'), 86);
}

// A compressed file, or two aligned files, are one part each; the run is
// still the same.
TEST(Spread, CompressedAndAlignedCorporaAreWholeParts) {
  TempDir t;
  std::string garden = source_dir() + "/samples/garden-en-es.tsv";
  ASSERT_EQ(run_shell("(gzip -n -c " + garden + " > " + (t / "g.tsv.gz") + " && cut -f1 " + garden + " > " +
                      (t / "en.txt") + " && cut -f2 " + garden + " > " + (t / "es.txt") + ")")
                .status,
            0);
  std::string stages = "[[stage]]\nkind = \"normalize\"\n[[stage]]\nkind = \"length\"\n[[stage]]\nkind = \"dedup\"\n"
                       "[[stage]]\nkind = \"split\"\ndev = 100\ntest = 100\n";
  write_file(t / "gz.toml", pipeline_text("layout = \"tsv\"\nfiles = [\"g.tsv.gz\"]", stages));
  write_file(t / "al.toml", pipeline_text("layout = \"aligned\"\nfiles = [\"en.txt\", \"es.txt\"]", stages));
  size_t made = 0;
  EXPECT_EQ(run_both(t.path(), "gz.toml", 4, t, "gz", &made), "");
  EXPECT_EQ(made, 1u);
  EXPECT_EQ(run_both(t.path(), "al.toml", 4, t, "al", &made), "");
  EXPECT_EQ(made, 1u);
}

// A map job that died (its part absent, a .partial left behind) is named
// by status and by reduce; re-running it writes the same bytes, and the
// run is then the same as one run: no pair lost or doubled.
TEST(Spread, ARerunMapJobChangesNothing) {
  TempDir t;
  std::string src = source_dir();
  std::string work = t / "work";
  auto sheaf = [&](const std::string& args) { return run_shell("cd " + src + " && " + binary() + " " + args); };
  ASSERT_EQ(sheaf("spread plan pipelines/demo.toml --parts 5 --buckets 5 --work " + work).status, 0);
  for (int k = 0; k < 5; ++k) ASSERT_EQ(sheaf("spread map " + work + " --part " + std::to_string(k) + " --threads 2").status, 0);
  for (int b = 0; b < 5; ++b) ASSERT_EQ(sheaf("spread bucket " + work + " --bucket " + std::to_string(b)).status, 0);
  std::string before = read_file(work + "/parts/3.pairs");
  ASSERT_FALSE(before.empty());
  // As if part 3's job was killed while writing.
  fs::remove(work + "/parts/3.json");
  fs::remove(work + "/parts/3.pairs");
  write_file(work + "/parts/3.pairs.partial", before.substr(0, before.size() / 2));
  Ran st = sheaf("spread status " + work);
  EXPECT_EQ(st.status, 1);
  EXPECT_EQ(st.out, "4 of 5 parts done; not done: 3\n5 of 5 buckets done\n");
  Ran red = sheaf("spread reduce " + work + " --quiet --out " + (t / "early"));
  EXPECT_NE(red.status, 0);
  EXPECT_NE(red.err.find("part 3 is not done: run `sheaf spread map " + work + " --part 3`"), std::string::npos) << red.err;
  EXPECT_FALSE(fs::exists(t / "early/manifest.json"));
  // Re-run (twice: a second run of a finished part replaces it alike).
  for (int i = 0; i < 2; ++i) ASSERT_EQ(sheaf("spread map " + work + " --part 3 --threads 1").status, 0);
  EXPECT_EQ(read_file(work + "/parts/3.pairs"), before);
  EXPECT_FALSE(fs::exists(work + "/parts/3.pairs.partial"));
  // Bucket 2's job died too: named likewise; its re-run writes the same
  // verdicts.
  std::string verdicts = read_file(work + "/buckets/2.verdicts");
  fs::remove(work + "/buckets/2.json");
  EXPECT_EQ(sheaf("spread status " + work).out, "5 of 5 parts done\n4 of 5 buckets done; not done: 2\n");
  red = sheaf("spread reduce " + work + " --quiet --out " + (t / "early"));
  EXPECT_NE(red.err.find("bucket 2 is not done: run `sheaf spread bucket " + work + " --bucket 2`"), std::string::npos)
      << red.err;
  ASSERT_EQ(sheaf("spread bucket " + work + " --bucket 2").status, 0);
  EXPECT_EQ(read_file(work + "/buckets/2.verdicts"), verdicts);
  EXPECT_EQ(sheaf("spread status " + work).out, "5 of 5 parts done\n5 of 5 buckets done\n");
  ASSERT_EQ(sheaf("spread reduce " + work + " --quiet --out " + (t / "spread")).status, 0);
  ASSERT_EQ(sheaf("run pipelines/demo.toml --quiet --out " + (t / "one")).status, 0);
  EXPECT_EQ(differences(t / "one", t / "spread"), "");
}

// Jobs killed (SIGKILL, no chance to clean up) at some moment while they
// work, then run again: the outputs are those of one run.
TEST(Spread, KilledJobsRunAgainGiveTheSameOutputs) {
  TempDir t;
  std::string text;
  for (int i = 0; i < 400000; ++i)  // 22 MB: a map job takes about 0.1 s, the reduce 0.25 s
    text += "line " + std::to_string(i % 90000) + " of the garden guide\tl\u00ednea " + std::to_string(i % 90000) +
            " de la gu\u00eda\n";
  write_file(t / "c.tsv", text);
  write_file(t / "p.toml", pipeline_text("files = [\"c.tsv\"]", "[[stage]]\nkind = \"normalize\"\n[[stage]]\nkind = "
                                                                  "\"dedup\"\n[[stage]]\nkind = \"split\"\ndev = 0.1\ntest = 0.1\n",
                                         t / "spread"));
  auto sheaf = [&](const std::string& args) { return run_shell("cd " + t.path() + " && " + binary() + " " + args); };
  auto killed = [&](const std::string& args, int ms) {
    pid_t pid = start_sheaf(args, t / "err");
    std::this_thread::sleep_for(std::chrono::milliseconds(ms));
    ::kill(pid, SIGKILL);
    int status = 0;
    ::waitpid(pid, &status, 0);
  };
  ASSERT_EQ(sheaf("spread plan p.toml --parts 2 --buckets 2 --work " + (t / "w")).status, 0);
  killed("spread map " + (t / "w") + " --part 0 --threads 2", 50);
  for (int k = 0; k < 2; ++k) ASSERT_EQ(sheaf("spread map " + (t / "w") + " --part " + std::to_string(k)).status, 0);
  killed("spread bucket " + (t / "w") + " --bucket 1", 15);
  for (int b = 0; b < 2; ++b) ASSERT_EQ(sheaf("spread bucket " + (t / "w") + " --bucket " + std::to_string(b)).status, 0);
  killed("spread reduce " + (t / "w") + " --quiet", 100);
  Ran r = sheaf("spread reduce " + (t / "w") + " --quiet");
  ASSERT_EQ(r.status, 0) << r.err;
  ASSERT_EQ(sheaf("run p.toml --quiet --out " + (t / "one")).status, 0);
  EXPECT_EQ(differences(t / "one", t / "spread"), "");
}

// Review findings, each held by a test.
// A stage counter that is not a count of pairs (the size of an exclusion
// list) is taken from one map job, not added over the parts.
TEST(Spread, ListSizesAreNotAddedOverParts) {
  TempDir t;
  std::string garden = source_dir() + "/samples/garden-en-es.tsv";
  write_file(t / "ex.tsv", "The garden opens at nine.\tEl jard\xc3\xadn abre a las nueve.\nA second line\tUna segunda\n");
  write_file(t / "p.toml", pipeline_text("files = [\"" + garden + "\"]",
                                         "[[stage]]\nkind = \"normalize\"\n[[stage]]\nkind = \"exclude\"\nfiles = "
                                         "[\"ex.tsv\"]\n[[stage]]\nkind = \"dedup\"\n"));
  EXPECT_EQ(run_both(t.path(), "p.toml", 7, t, "ex", nullptr, " --buckets 3"), "");
}

// The file-start checks (UTF-16 without a byte-order mark, CR-only lines)
// see the same bytes as one run: the first part is at least 512 bytes.
TEST(Spread, TheFirstPartJudgesTheEncodingAsOneRunDoes) {
  TempDir t;
  std::string u16;
  for (char c : std::string("a\tb\n") + std::string(300, 'x') + "\tyy\n") u16 += std::string(1, c) + '\0';
  write_file(t / "u16.tsv", u16);
  std::string nulhead;
  for (int i = 0; i < 60; ++i) nulhead += std::string("k") + '\0';
  nulhead += "\n";
  for (int i = 0; i < 2000; ++i) nulhead += "pair " + std::to_string(i) + "\tpar " + std::to_string(i) + "\n";
  write_file(t / "nul.tsv", nulhead);
  for (const char* f : {"u16.tsv", "nul.tsv"}) {
    write_file(t / "p.toml", pipeline_text(std::string("files = [\"") + f + "\"]", "[[stage]]\nkind = \"dedup\"\n"));
    Ran one = run_shell("cd " + t.path() + " && " + binary() + " run p.toml --quiet --force --out " + (t / "one"));
    Ran spread = run_shell("cd " + t.path() + " && " + binary() + " spread local p.toml --parts 200 --work " + (t / "w") +
                           " --quiet --force --out " + (t / "spread"));
    EXPECT_EQ(one.status, spread.status) << f << ": " << one.err << " / " << spread.err;
    if (one.status == 0) {
      EXPECT_EQ(differences(t / "one", t / "spread"), "") << f;
    } else {
      EXPECT_NE(spread.err.find("UTF-16"), std::string::npos) << spread.err;
    }
  }
}

// A part of another plan (a map job of an earlier plan that finished late)
// is refused; so is a plan whose parts overlap, and a part crafted with a
// matching checksum but a pair that cannot be its own.
TEST(Spread, PartsOfAnotherPlanAndCraftedFilesAreRefused) {
  TempDir t;
  std::string src = source_dir();
  auto sheaf = [&](const std::string& args) { return run_shell("cd " + src + " && " + binary() + " " + args); };
  ASSERT_EQ(sheaf("spread local pipelines/demo.toml --parts 4 --buckets 0 --work " + (t / "a") + " --quiet --out " +
                  (t / "ra")).status,
            0);
  ASSERT_EQ(sheaf("spread local pipelines/demo.toml --parts 2 --buckets 0 --work " + (t / "b") + " --quiet --out " +
                  (t / "rb")).status,
            0);
  for (const char* ext : {".json", ".pairs", ".long"}) fs::copy_file(t / "a/parts/0" + ext, t / "b/parts/0" + ext, fs::copy_options::overwrite_existing);
  Ran r = sheaf("spread reduce " + (t / "b") + " --quiet --force --out " + (t / "rb"));
  EXPECT_NE(r.status, 0);
  EXPECT_NE(r.err.find("belongs to another plan"), std::string::npos) << r.err;
  // Overlapping ranges in a damaged plan.
  std::string plan = read_file(t / "a/plan.json");
  size_t at = plan.find("\"begin\"", plan.find("\"begin\"") + 1);
  ASSERT_NE(at, std::string::npos);
  size_t num = plan.find_first_of("0123456789", at);
  plan.replace(num, plan.find_first_not_of("0123456789", num) - num, "1000");
  write_file(t / "a/plan.json", plan);
  r = sheaf("spread status " + (t / "a"));
  EXPECT_NE(r.status, 0);
  EXPECT_NE(r.err.find("damaged plan"), std::string::npos) << r.err;
  // A crafted part: the first pair's stage index out of range, its record's
  // checksum made to match.
  ASSERT_EQ(sheaf("spread plan pipelines/demo.toml --parts 2 --buckets 0 --work " + (t / "c")).status, 0);
  for (int k = 0; k < 2; ++k) ASSERT_EQ(sheaf("spread map " + (t / "c") + " --part " + std::to_string(k)).status, 0);
  std::string pairs = read_file(t / "c/parts/0.pairs");
  int32_t stage = 50;
  std::memcpy(pairs.data() + 12, &stage, 4);
  write_file(t / "c/parts/0.pairs", pairs);
  std::string rec = read_file(t / "c/parts/0.json");
  char hex[17];
  std::snprintf(hex, sizeof hex, "%016llx", static_cast<unsigned long long>(XXH3_64bits(pairs.data(), pairs.size())));
  size_t sum = rec.find("\"pairs_checksum\": \"") + 19;
  rec.replace(sum, 16, hex);
  write_file(t / "c/parts/0.json", rec);
  r = sheaf("spread reduce " + (t / "c") + " --quiet --out " + (t / "rc"));
  EXPECT_EQ(r.status, 1) << r.err;
  EXPECT_NE(r.err.find("cannot be one of its own"), std::string::npos) << r.err;
}

// A stop signal to `spread local` stops the jobs and starts no more.
TEST(Spread, AStopSignalStopsTheLocalJobs) {
  TempDir t;
  std::string text;
  for (int i = 0; i < 200000; ++i) text += "pair " + std::to_string(i) + " of words\tpar " + std::to_string(i) + "\n";
  write_file(t / "c.tsv", text);
  write_file(t / "p.toml", pipeline_text("files = [\"" + (t / "c.tsv") + "\"]", "[[stage]]\nkind = \"normalize\"\n[[stage]]\nkind = \"dedup\"\n"));
  pid_t pid = start_sheaf("spread local " + (t / "p.toml") + " --parts 300 --buckets 1 --jobs 1 --work " + (t / "w") +
                              " --quiet --out " + (t / "out"),
                          t / "err");
  std::this_thread::sleep_for(std::chrono::milliseconds(400));
  ::kill(pid, SIGTERM);
  int status = 0;
  ::waitpid(pid, &status, 0);
  // Stopped: with "interrupted" once its handler is in place, or by the
  // signal itself if it came sooner (a slow start under a sanitizer).
  EXPECT_FALSE(WIFEXITED(status) && WEXITSTATUS(status) == 0);
  size_t done = 0;
  std::error_code ec;
  for (const auto& e : fs::directory_iterator(t / "w/parts", ec)) done += e.path().extension() == ".json";
  EXPECT_LT(done, 300u);
  EXPECT_FALSE(fs::exists(t / "out/manifest.json"));
}

TEST(Spread, ADamagedOrStalePartIsRefused) {
  TempDir t;
  std::string src = source_dir();
  std::string work = t / "work";
  auto sheaf = [&](const std::string& args) { return run_shell("cd " + src + " && " + binary() + " " + args); };
  ASSERT_EQ(sheaf("spread local pipelines/demo.toml --parts 3 --buckets 3 --work " + work + " --quiet --out " + (t / "a")).status, 0);
  // One byte changed in the middle of part 1.
  std::string bytes = read_file(work + "/parts/1.pairs");
  bytes[bytes.size() / 2] ^= 0x20;
  write_file(work + "/parts/1.pairs", bytes);
  Ran r = sheaf("spread reduce " + work + " --quiet --out " + (t / "b"));
  EXPECT_NE(r.status, 0);
  EXPECT_NE(r.err.find("1.pairs"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("run its map job again"), std::string::npos) << r.err;
  EXPECT_FALSE(fs::exists(t / "b/manifest.json"));
  // One byte changed in a map job's keys: the bucket job refuses them.
  std::string keys = read_file(work + "/parts/2.keys.1");
  ASSERT_GE(keys.size(), 24u);
  keys[8] ^= 0x01;
  write_file(work + "/parts/2.keys.1", keys);
  Ran bk = sheaf("spread bucket " + work + " --bucket 1");
  EXPECT_NE(bk.status, 0);
  EXPECT_NE(bk.err.find("2.keys.1"), std::string::npos) << bk.err;
  EXPECT_NE(bk.err.find("does not match its record"), std::string::npos) << bk.err;
  // A pipeline file changed after planning: every job refuses it.
  std::string text = read_file(src + "/pipelines/demo.toml");
  text.replace(text.find("../samples"), 10, src + "/samples");
  write_file(t / "demo.toml", text);
  ASSERT_EQ(sheaf("spread plan " + (t / "demo.toml") + " --parts 2 --work " + (t / "w2")).status, 0);
  write_file(t / "demo.toml", text.replace(text.find("source_max = 80"), 14, "source_max = 79"));
  Ran m = sheaf("spread map " + (t / "w2") + " --part 0");
  EXPECT_NE(m.status, 0);
  EXPECT_NE(m.err.find("changed since the run was planned"), std::string::npos) << m.err;
  Ran bad = sheaf("spread map " + (t / "w2") + " --part 2");
  EXPECT_NE(bad.status, 0);
  EXPECT_NE(bad.err.find("--part 2 is not one of them"), std::string::npos) << bad.err;
}

// Without --buckets, the plan takes as many buckets as keep each bucket
// job's table within --job-memory: 43 bytes a key (docs/cluster.md), keys
// estimated from the lines of the input's first MiB.
TEST(Spread, BucketsFollowTheJobMemory) {
  TempDir t;
  std::string text;
  for (int i = 0; i < 500000; ++i) text += "a\tb\n";  // 500,000 keys: 21.5 MB of table at most
  write_file(t / "c.tsv", text);
  write_file(t / "p.toml", pipeline_text("files = [\"c.tsv\"]", "[[stage]]\nkind = \"dedup\"\n"));
  auto plan = [&](const std::string& opts) {
    return run_shell("cd " + t.path() + " && " + binary() + " spread plan p.toml --parts 3 --work w " + opts).out;
  };
  EXPECT_EQ(plan("--job-memory 32"), "planned 3 parts and 2 buckets in " + (t / "w") + "/plan.json\n");  // 16 MiB for tables
  EXPECT_EQ(plan("--job-memory 64"), "planned 3 parts and 1 buckets in " + (t / "w") + "/plan.json\n");
  EXPECT_EQ(plan("--buckets 7"), "planned 3 parts and 7 buckets in " + (t / "w") + "/plan.json\n");
  // A pipeline whose first stateful stage is not a dedup stage has none.
  write_file(t / "p.toml", pipeline_text("files = [\"c.tsv\"]", "[[stage]]\nkind = \"split\"\ndev = 10\ntest = 10\n"));
  EXPECT_EQ(plan("--buckets 7"), "planned 3 parts and 0 buckets in " + (t / "w") + "/plan.json\n");
}

// The job scripts: an array with one task a part, a reduce job, the
// #SBATCH lines asked for, and the commands that chain them.
TEST(Spread, SlurmScriptsChainTheJobs) {
  TempDir t;
  std::string work = t / "work";
  Ran r = run_shell("cd " + source_dir() + " && " + binary() + " spread slurm pipelines/demo.toml --parts 6 --buckets 6 --work " +
                    work + " --threads 4 --sbatch --partition=long --sbatch --time=2:00:00 --out " + (t / "out"));
  ASSERT_EQ(r.status, 0) << r.err;
  std::string map = read_file(work + "/map.sbatch"), reduce = read_file(work + "/reduce.sbatch");
  EXPECT_NE(map.find("#SBATCH --array=0-5\n"), std::string::npos) << map;
  EXPECT_NE(map.find("#SBATCH --cpus-per-task=4\n"), std::string::npos);
  EXPECT_NE(map.find("#SBATCH --partition=long\n#SBATCH --time=2:00:00\n"), std::string::npos);
  EXPECT_NE(map.find("spread map '" + work + "' --part \"$SLURM_ARRAY_TASK_ID\" --threads 4"), std::string::npos) << map;
  EXPECT_NE(reduce.find("spread reduce '" + work + "' --threads 4 --out '" + (t / "out") + "'"), std::string::npos)
      << reduce;
  EXPECT_EQ(reduce.find("--array"), std::string::npos);
  // Deduplication by key bucket: one bucket job a bucket, after the maps,
  // before the reduce job.
  std::string bucket = read_file(work + "/bucket.sbatch");
  EXPECT_NE(bucket.find("#SBATCH --array=0-5\n"), std::string::npos) << bucket;
  EXPECT_NE(bucket.find("spread bucket '" + work + "' --bucket \"$SLURM_ARRAY_TASK_ID\""), std::string::npos) << bucket;
  EXPECT_NE(r.out.find("--dependency=afterok:${map%%;*} '" + work + "/bucket.sbatch'"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("--dependency=afterok:${bucket%%;*} '" + work + "/reduce.sbatch'"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("--dependency=afterok:"), std::string::npos) << r.out;
  // The jobs that wait are cancelled when a job before them fails, not left
  // pending (sbatch(1) of Debian's slurm-wlm 22.05: --kill-on-invalid-dep).
  EXPECT_NE(bucket.find("#SBATCH --kill-on-invalid-dep=yes\n"), std::string::npos) << bucket;
  EXPECT_NE(reduce.find("#SBATCH --kill-on-invalid-dep=yes\n"), std::string::npos) << reduce;
  EXPECT_EQ(map.find("kill-on-invalid-dep"), std::string::npos) << map;
}

// A second copy of a job that is still running (a requeued task beside a
// hand re-run) waits for the first, then finds the work done and leaves the
// files alone; if the first died unfinished, the second does the work. A
// new plan of the same work directory is refused while a job runs. The lock
// is held here by this process, as the running job would hold it.
TEST(Spread, ASecondCopyOfARunningJobWaitsForIt) {
  TempDir t;
  std::string work = t / "work";
  auto sheaf = [&](const std::string& args) { return run_shell("cd " + source_dir() + " && " + binary() + " " + args); };
  ASSERT_EQ(sheaf("spread plan pipelines/demo.toml --parts 3 --buckets 2 --work " + work).status, 0);
  for (int k = 0; k < 3; ++k) ASSERT_EQ(sheaf("spread map " + work + " --part " + std::to_string(k)).status, 0);
  std::string pairs = read_file(work + "/parts/2.pairs");
  auto hold = [&] {
    int fd = ::open((work + "/parts/2.lock").c_str(), O_RDWR);
    struct flock fl {};
    fl.l_type = F_WRLCK;
    fl.l_whence = SEEK_SET;
    EXPECT_EQ(::fcntl(fd, F_SETLK, &fl), 0);
    return fd;
  };
  auto second = [&](int fd, const std::string& err) {
    pid_t pid = start_sheaf("spread map " + work + " --part 2", err);
    std::this_thread::sleep_for(std::chrono::milliseconds(500));
    int status = 0;
    EXPECT_EQ(::waitpid(pid, &status, WNOHANG), 0) << "the second copy did not wait";
    EXPECT_EQ(read_file(work + "/parts/2.pairs"), pairs);
    Ran plan = sheaf("spread plan pipelines/demo.toml --parts 3 --buckets 2 --work " + work);
    EXPECT_EQ(plan.status, 2);
    EXPECT_NE(plan.err.find("a job of the earlier plan (2.lock) is running in another process"), std::string::npos)
        << plan.err;
    ::close(fd);  // the first copy ends
    EXPECT_EQ(::waitpid(pid, &status, 0), pid);
    EXPECT_TRUE(WIFEXITED(status) && WEXITSTATUS(status) == 0) << read_file(err);
    EXPECT_NE(read_file(err).find("map job 2 is running in another process; waiting for it"), std::string::npos)
        << read_file(err);
  };
  second(hold(), t / "err1");
  EXPECT_NE(read_file(t / "err1").find("map job 2 was done by the other process; nothing left to do"), std::string::npos);
  EXPECT_EQ(read_file(work + "/parts/2.pairs"), pairs);
  // The first copy died before it wrote its record: the second maps part 2.
  fs::remove(work + "/parts/2.json");
  second(hold(), t / "err2");
  EXPECT_EQ(read_file(t / "err2").find("nothing left to do"), std::string::npos);
  EXPECT_TRUE(fs::exists(work + "/parts/2.json"));
  EXPECT_EQ(read_file(work + "/parts/2.pairs"), pairs);
  // A part file cut short under a whole record is not done.
  std::string one = read_file(work + "/parts/1.pairs");
  write_file(work + "/parts/1.pairs", one.substr(0, one.size() - 1));
  Ran st = sheaf("spread status " + work);
  EXPECT_EQ(st.status, 1);
  EXPECT_EQ(st.out, "2 of 3 parts done; not done: 1\n0 of 2 buckets done; not done: 0 1\n") << st.out;
  // With no job running, a new plan clears the parts and keeps the locks.
  ASSERT_EQ(sheaf("spread plan pipelines/demo.toml --parts 3 --buckets 2 --work " + work).status, 0);
  EXPECT_FALSE(fs::exists(work + "/parts/2.json"));
  EXPECT_TRUE(fs::exists(work + "/parts/2.lock"));
}

// A real cluster, where one answers (scripts/slurm-local start): the jobs
// are submitted with sbatch and the outputs are those of one run.
TEST(Spread, OnARealSlurmClusterTheRunIsTheSame) {
  Ran info = run_shell("sinfo -h -o %T 2>/dev/null");
  if (info.status != 0 || (info.out.find("idle") == std::string::npos && info.out.find("mixed") == std::string::npos))
    GTEST_SKIP() << "no Slurm cluster answers here; start one with scripts/slurm-local start";
  TempDir t;
  std::string work = t / "work";
  fs::permissions(t.path(), fs::perms::all);
  Ran r = run_shell("cd " + source_dir() + " && " + binary() + " spread slurm pipelines/demo.toml --parts 4 --work " +
                    work + " --threads 1 --submit --out " + (t / "spread"));
  ASSERT_EQ(r.status, 0) << r.err;
  // Wait for both jobs to leave the queue (at most three minutes).
  for (int i = 0; i < 180 && !fs::exists(t / "spread/manifest.json"); ++i) {
    Ran q = run_shell("squeue -h -n sheaf-map,sheaf-reduce -o %i");
    if (q.out.empty() && i > 2) break;
    std::this_thread::sleep_for(std::chrono::seconds(1));
  }
  ASSERT_TRUE(fs::exists(t / "spread/manifest.json")) << run_shell("cat " + work + "/logs/*").out;
  ASSERT_EQ(run_shell("cd " + source_dir() + " && " + binary() + " run pipelines/demo.toml --quiet --out " + (t / "one")).status, 0);
  EXPECT_EQ(differences(t / "one", t / "spread"), "");
}

}  // namespace
}  // namespace sheaf::test
