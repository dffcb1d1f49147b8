// Regression tests for edges of the core types: histograms of hostile values,
// shard checksums of bodies of 4 GiB or more, and partial output files.
#include <sys/mman.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>
#include <zlib.h>

#include <chrono>
#include <filesystem>
#include <fstream>
#include <random>
#include <thread>
#include <vector>

#include <gtest/gtest.h>

#include "core/stats.h"
#include "io/output_file.h"
#include "run/run_record.h"
#include "shards/shard_format.h"
#include "test_util.h"

namespace sheaf {
namespace {

// A single enormous value (the length ratio of a 1 MiB line against a
// one-character side is in the hundreds of millions) used to resize a dense
// array to that many counters; now it costs one map entry.
TEST(Edges, HistogramHoldsHugeValuesWithoutADenseArray) {
  Histogram h;
  h.add(3);
  h.add(7, 2);
  h.add(100'000'000'000ULL);
  h.add(1ULL << 40);
  Distribution d = h.summary();
  EXPECT_EQ(d.count, 5u);
  EXPECT_EQ(d.min, 3u);
  EXPECT_EQ(d.p50, 7u);  // rank ceil(2.5) = 3: 3, 7, [7], ...
  EXPECT_EQ(d.max, 1ULL << 40);
  EXPECT_EQ(d.sum, 3u + 14u + 100'000'000'000ULL + (1ULL << 40));
  // bins() folds everything past the last bin into it.
  EXPECT_EQ(h.bins(5, 3), (std::vector<uint64_t>{1, 2, 2}));
}

// Reference: distribution_of() sorts the values themselves (nearest rank,
// the definition in stats.h). Values straddle the dense/sparse boundary.
TEST(Edges, HistogramMatchesSortedValuesAcrossTheDenseLimit) {
  std::mt19937_64 rng(7);
  for (int trial = 0; trial < 20; ++trial) {
    Histogram a, b;
    std::vector<uint64_t> all;
    int n = 1 + static_cast<int>(rng() % 400);
    for (int i = 0; i < n; ++i) {
      uint64_t v = (rng() % 3 == 0) ? Histogram::kDense - 50 + rng() % 100 : rng() % 200;
      if (rng() % 17 == 0) v = rng() >> 20;
      all.push_back(v);
      (i % 2 ? a : b).add(v);
    }
    a.merge(b);
    Distribution want = distribution_of(all);
    Distribution got = a.summary();
    EXPECT_EQ(got.count, want.count);
    EXPECT_EQ(got.sum, want.sum);
    EXPECT_EQ(got.min, want.min);
    EXPECT_EQ(got.p50, want.p50);
    EXPECT_EQ(got.p90, want.p90);
    EXPECT_EQ(got.p95, want.p95);
    EXPECT_EQ(got.p99, want.p99);
    EXPECT_EQ(got.max, want.max);
    if (want.max > 1'000'000) continue;  // counts() is dense: only for small values
    std::vector<uint64_t> dense = a.counts();
    ASSERT_EQ(dense.size(), want.max + 1);
    uint64_t total = 0;
    for (uint64_t c : dense) total += c;
    EXPECT_EQ(total, want.count);
  }
}

// docs/shard-format.md: body_crc32 is zlib's CRC-32 of the whole body (the
// value Python's zlib.crc32 gives). Before, the length was cast to 32 bits, so
// a body of 4 GiB + 3 bytes was checksummed as its first 3 bytes. The
// reference is zlib's own crc32_combine over 1 MiB blocks of zeros.
TEST(Edges, ShardCrcCoversBodiesOfFourGibibytesAndMore) {
  const uint64_t n = (uint64_t{1} << 32) + 3;
  void* m = ::mmap(nullptr, n, PROT_READ, MAP_PRIVATE | MAP_ANONYMOUS | MAP_NORESERVE, -1, 0);
  ASSERT_NE(m, MAP_FAILED);  // zero pages, read-only: no memory is used
  std::vector<unsigned char> mib(1 << 20, 0);
  uLong block = crc32(0, mib.data(), static_cast<uInt>(mib.size()));
  uLong want = block;
  z_off_t len = static_cast<z_off_t>(mib.size());
  for (int i = 0; i < 12; ++i) {  // 1 MiB doubled 12 times: 4 GiB
    want = crc32_combine(want, want, len);
    len *= 2;
  }
  want = crc32(want, mib.data(), 3);
  uint32_t got = shard_crc32(m, n);
  EXPECT_EQ(got, static_cast<uint32_t>(want));
  EXPECT_NE(got, shard_crc32(m, 3));
  ::munmap(m, n);
}

// An OutputFile that was never opened must not remove ".partial" in the
// current directory when a failed run discards its outputs.
TEST(Edges, DiscardingAFileNeverOpenedRemovesNothing) {
  auto dir = std::filesystem::temp_directory_path() / ("sheaf-edges-" + std::to_string(::getpid()));
  std::filesystem::create_directories(dir);
  auto old = std::filesystem::current_path();
  std::filesystem::current_path(dir);
  { std::ofstream(".partial") << "a user's file"; }
  {
    OutputFile never;
    never.discard();
  }
  EXPECT_TRUE(std::filesystem::exists(dir / ".partial"));
  std::filesystem::current_path(old);
  std::filesystem::remove_all(dir);
}

// A link planted under an output's ".partial" name (in a previous run's
// directory, or any name under --force) is replaced, never written through.
TEST(Edges, AnOutputNeverWritesThroughALinkedPartialFile) {
  test::TempDir t;
  test::write_file(t / "victim.txt", "a user's file\n");
  std::filesystem::create_symlink(t / "victim.txt", t / "train.tsv.partial");
  OutputFile f;
  ASSERT_TRUE(f.open(t / "train.tsv").ok());
  f.write("x\ty\n");
  ASSERT_TRUE(f.commit().ok());
  EXPECT_EQ(test::read_file(t / "victim.txt"), "a user's file\n");
  EXPECT_EQ(test::read_file(t / "train.tsv"), "x\ty\n");
  EXPECT_FALSE(std::filesystem::is_symlink(t / "train.tsv"));
}

// rewind() takes back what was written after a mark: the committed file,
// its size, record count and checksum are those of a file that only ever
// got the rows before the mark (checksum: XXH3-64 of the file as read back,
// the xxHash library's own answer), also across the write buffer.
TEST(Edges, AnOutputRewoundToAMarkIsTheFileUpToIt) {
  test::TempDir t;
  OutputFile f;
  ASSERT_TRUE(f.open(t / "rejected.tsv").ok());
  std::string kept;
  for (int i = 0; i < 1000; ++i) {
    std::string row = std::to_string(i) + "\tpass1\treason\t-\tline\n";
    kept += row;
    f.write(row);
    f.add_record();
  }
  auto m = f.mark();
  EXPECT_EQ(m.size, kept.size());
  // More than the 256 KiB buffer after the mark: some reaches the file.
  std::string step_row(1000, 'x');
  for (int i = 0; i < 3000; ++i) {
    f.write(step_row + "\n");
    f.add_record();
  }
  ASSERT_TRUE(f.rewind(m).ok());
  ASSERT_TRUE(f.commit().ok());
  EXPECT_EQ(test::read_file(t / "rejected.tsv"), kept);
  EXPECT_EQ(f.records(), 1000u);
  EXPECT_EQ(f.size(), kept.size());
  uint64_t size = 0;
  auto sum = checksum_file(t / "rejected.tsv", &size);
  ASSERT_TRUE(sum.ok());
  EXPECT_EQ(f.checksum(), *sum);
  EXPECT_EQ(f.checksum(), XXH3_64bits(kept.data(), kept.size()));
  // A mark of a file with nothing in it rewinds to empty.
  OutputFile g;
  ASSERT_TRUE(g.open(t / "empty.tsv").ok());
  auto none = g.mark();
  g.write("row\n");
  ASSERT_TRUE(g.rewind(none).ok());
  ASSERT_TRUE(g.commit().ok());
  EXPECT_EQ(test::read_file(t / "empty.tsv"), "");
  EXPECT_EQ(g.checksum(), XXH3_64bits(nullptr, 0));
}

// A directory of someone else's files is refused, and keeps no lock file.
TEST(Edges, ARefusedDirectoryKeepsNoLockFile) {
  test::TempDir t;
  std::filesystem::create_directories(t / "mine");
  test::write_file(t / "mine/notes.txt", "mine\n");
  test::write_file(t / "c.tsv", "Hello there.\tHola.\n");
  test::write_file(t / "p.toml", test::pipeline_text("files = [\"c.tsv\"]\nsource_lang = \"en\"\ntarget_lang = \"es\"",
                                                     "[[stage]]\nkind = \"length\"\n", "mine"));
  auto r = test::run_sheaf("run " + (t / "p.toml") + " --quiet");
  EXPECT_EQ(r.status, 2);
  std::vector<std::string> names;
  for (const auto& e : std::filesystem::directory_iterator(t / "mine")) names.push_back(e.path().filename().string());
  EXPECT_EQ(names, std::vector<std::string>{"notes.txt"});
}

// The checked record reader: outputs must lie inside the run directory, and
// a record is a small regular file (a link to /dev/zero is not read).
TEST(Edges, TheRecordReaderRefusesOutsidePathsAndEndlessFiles) {
  test::TempDir t;
  auto record = [](const std::string& path) {
    return "{\"format\": \"sheaf-run-record\", \"tool\": \"sheaf\", \"outputs\": [{\"path\": \"" + path + "\"}]}";
  };
  test::write_file(t / "ok.json", record("shards/train.00000.shard"));
  ASSERT_TRUE(read_manifest_outputs(t / "ok.json").ok());
  for (const std::string bad : {"../../etc/hostname", "/etc/hostname", "a/../../b", ""}) {
    test::write_file(t / "bad.json", record(bad));
    EXPECT_FALSE(read_manifest_outputs(t / "bad.json").ok()) << bad;
  }
  std::filesystem::create_symlink("/dev/zero", t / "zero.json");
  EXPECT_FALSE(read_manifest_outputs(t / "zero.json").ok());
}

// A run waiting on its input (an idle pipe) already holds the output
// directory's lock: a second run into it stops at once instead of finishing
// there and then having its files cleaned away by the first.
TEST(Edges, ARunWaitingOnItsInputAlreadyHoldsTheDirectory) {
  test::TempDir t;
  ASSERT_EQ(::mkfifo((t / "pipe.tsv").c_str(), 0600), 0);
  test::write_file(t / "c.tsv", "Good morning.\tBuenos d\u00edas.\n");
  auto pipeline = [&](const std::string& name, const std::string& input) {
    test::write_file(t / name, test::pipeline_text("files = [\"" + input + "\"]\nsource_lang = \"en\"\ntarget_lang = \"es\"",
                                                   "[[stage]]\nkind = \"length\"\n", "out"));
    return t / name;
  };
  pid_t waiting = test::start_sheaf("run " + pipeline("a.toml", "pipe.tsv") + " --quiet", t / "err-a");
  std::this_thread::sleep_for(std::chrono::milliseconds(500));
  auto second = test::run_sheaf("run " + pipeline("b.toml", "c.tsv") + " --quiet");
  EXPECT_EQ(second.status, 1) << second.err;
  EXPECT_NE(second.err.find("another sheaf run"), std::string::npos) << second.err;
  {
    std::ofstream feed(t / "pipe.tsv");  // unblocks the first run
    feed << "Good night.\tBuenas noches.\n";
  }
  int status = 0;
  ::waitpid(waiting, &status, 0);
  EXPECT_TRUE(WIFEXITED(status) && WEXITSTATUS(status) == 0) << test::read_file(t / "err-a");
  EXPECT_EQ(test::read_file(t / "out/train.tsv"), "Good night.\tBuenas noches.\n");
}

}  // namespace
}  // namespace sheaf
