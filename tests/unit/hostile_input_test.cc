// Hostile input, faults and friction: one regression test per defect found
// by trying 44 kinds of bad input and fault (docs/reliability.md lists them).
// Each test failed before its fix.
#include <fcntl.h>
#include <gtest/gtest.h>
#include <signal.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include <chrono>
#include <functional>
#include <map>
#include <set>
#include <thread>

#include <xxhash.h>
#include <zlib.h>

#include <cstring>

#include "io/output_file.h"
#include "shards/shard_reader.h"
#include "test_util.h"

namespace sheaf {
namespace {

using test::fs::exists;

struct Child {
  pid_t pid;
};

Child start(const std::string& args, const std::string& err_path) { return {test::start_sheaf(args, err_path)}; }

// Waits at most `limit` seconds, then kills the child (a test that fails
// must not hang); returns the exit status (128 + signal when killed).
int wait_at_most(pid_t pid, double limit, double* seconds) {
  auto t0 = std::chrono::steady_clock::now();
  int status = 0;
  for (;;) {
    pid_t r = ::waitpid(pid, &status, WNOHANG);
    double s = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
    if (r == pid) {
      *seconds = s;
      break;
    }
    if (s > limit) {
      ::kill(pid, SIGKILL);
      ::waitpid(pid, &status, 0);
      *seconds = s;
      break;
    }
    std::this_thread::sleep_for(std::chrono::milliseconds(20));
  }
  return WIFEXITED(status) ? WEXITSTATUS(status) : 128 + WTERMSIG(status);
}

void wait_until_running(const std::string& dir) {
  for (int i = 0; i < 2000 && !exists(dir + "/.sheaf-run"); ++i)
    std::this_thread::sleep_for(std::chrono::milliseconds(10));
}

bool has_partial_files(const std::string& dir) {
  if (!exists(dir)) return false;
  for (const auto& e : test::fs::recursive_directory_iterator(dir))
    if (e.path().extension() == ".partial") return true;
  return false;
}

std::string corpus_lines(size_t lines) {
  std::string text;
  for (size_t i = 0; i < lines; ++i)
    text += "The seed packet number " + std::to_string(i) + " is ready.\tEl sobre " + std::to_string(i * 7) +
            " de semillas est\u00e1 listo.\n";
  return text;
}

const char* kLangs = "source_lang = \"en\"\ntarget_lang = \"es\"";

// A pipeline of `stages` over one corpus file, writing to `out`.
std::string write_pipeline(test::TempDir& t, const std::string& corpus, const std::string& stages,
                           const std::string& out, const std::string& extra_corpus = "") {
  std::string p = t / "p.toml";
  test::write_file(p, test::pipeline_text("files = [\"" + corpus + "\"]\n" + kLangs + "\n" + extra_corpus, stages, out));
  return p;
}

const char* kLearnAndShard =
    "[[stage]]\nkind = \"normalize\"\n[[stage]]\nkind = \"split\"\ndev = 0.01\ntest = 0.01\n"
    "[[stage]]\nkind = \"vocabulary\"\nsize = 20000\nsweep = []\n[[stage]]\nkind = \"shards\"\n";

// 1. Two runs into one directory at once.
TEST(Hostile, ASecondRunIntoTheSameDirectoryIsRefusedWhileTheFirstHoldsIt) {
  test::TempDir t;
  test::write_file(t / "c.tsv", corpus_lines(250000));
  std::string p = write_pipeline(t, t / "c.tsv", kLearnAndShard, t / "out");
  Child first = start("run " + p + " --threads 1 --quiet", t / "err1");
  wait_until_running(t / "out");
  auto second = test::run_sheaf("run " + p + " --quiet");
  double secs = 0;
  int rc = wait_at_most(first.pid, 300, &secs);
  ASSERT_EQ(rc, 0) << test::read_file(t / "err1");
  EXPECT_EQ(second.status, 1) << second.err;
  EXPECT_NE(second.err.find("another sheaf run (process " + std::to_string(first.pid) + ")"), std::string::npos)
      << second.err;
  // The first run's record describes the files as they are.
  auto check = test::run_sheaf("inspect " + (t / "out"));
  EXPECT_EQ(check.status, 0) << check.out << check.err;
}

// 2. An output directory that cannot be read (as a user who is not root).
TEST(Hostile, AnUnreadableOutputDirectoryIsAnErrorValue) {
  test::TempDir t;
  ::chmod(t.path().c_str(), 0755);
  test::write_file(t / "c.tsv", "a\tb\n");
  std::string p = write_pipeline(t, t / "c.tsv", "", t / "out");
  ::chmod(p.c_str(), 0644);
  ::chmod((t / "c.tsv").c_str(), 0644);
  test::fs::create_directory(t / "out");
  test::write_file(t / "out/manifest.json", "{}");
  ::chmod((t / "out").c_str(), 0);
  std::string as_user = ::geteuid() == 0 ? "setpriv --reuid=65534 --regid=65534 --clear-groups " : "";
  if (test::run_shell(as_user + test::binary() + " --version").status != 0) GTEST_SKIP() << "cannot run as another user";
  auto r = test::run_shell(as_user + test::binary() + " run " + p + " --quiet");
  ::chmod((t / "out").c_str(), 0755);
  EXPECT_EQ(r.status, 1) << r.err;
  EXPECT_NE(r.err.find("sheaf: "), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("Permission denied"), std::string::npos) << r.err;
  EXPECT_EQ(r.err.find("terminate"), std::string::npos) << r.err;
}

// 3. Out of memory.
TEST(Hostile, OutOfMemoryIsOneLineExitOneAndNoPartialFiles) {
#ifdef SHEAF_SANITIZED
  GTEST_SKIP() << "sanitizers reserve more address space than the limit";
#endif
  test::TempDir t;
  test::write_file(t / "c.tsv", corpus_lines(20000));
  std::string p = write_pipeline(t, t / "c.tsv", kLearnAndShard, t / "out");
  auto r = test::run_shell("ulimit -v 60000; " + test::binary() + " run " + p + " --quiet --threads 2");
  EXPECT_EQ(r.status, 1) << r.err;
  EXPECT_NE(r.err.find("out of memory"), std::string::npos) << r.err;
  EXPECT_EQ(test::lines_of(r.err).size(), 1u) << r.err;
  EXPECT_FALSE(has_partial_files(t / "out"));
  EXPECT_FALSE(exists(t / "out/manifest.json"));
}

// 4. A signal while the reader waits: a line with no end, an idle pipe.
TEST(Hostile, ASignalStopsTheRunWhileTheReaderWaits) {
  test::TempDir t;
  std::string p = write_pipeline(t, "/dev/zero", "", t / "out");
  Child endless = start("run " + p + " --quiet --threads 2", t / "err");
  std::this_thread::sleep_for(std::chrono::milliseconds(800));
  ::kill(endless.pid, SIGINT);
  double secs = 0;
  int rc = wait_at_most(endless.pid, 15, &secs);
  EXPECT_EQ(rc, 1) << test::read_file(t / "err");
  EXPECT_LT(secs, 5.0);  // within a second when idle; room for a loaded CI (before: 33 s, never)
  EXPECT_NE(test::read_file(t / "err").find("interrupted"), std::string::npos);
  EXPECT_FALSE(has_partial_files(t / "out"));

  // A pipe with a writer that never writes.
  ASSERT_EQ(::mkfifo((t / "fifo").c_str(), 0600), 0);
  int keep = ::open((t / "fifo").c_str(), O_RDWR);
  ASSERT_GE(keep, 0);
  p = write_pipeline(t, t / "fifo", "", t / "out2");
  Child idle = start("run " + p + " --quiet --threads 2", t / "err2");
  std::this_thread::sleep_for(std::chrono::milliseconds(800));
  ::kill(idle.pid, SIGTERM);
  rc = wait_at_most(idle.pid, 15, &secs);
  ::close(keep);
  EXPECT_EQ(rc, 1) << test::read_file(t / "err2");
  EXPECT_LT(secs, 5.0);  // within a second when idle; room for a loaded CI (before: 33 s, never)
  EXPECT_NE(test::read_file(t / "err2").find("interrupted"), std::string::npos);
}

// 5. A symbolic link in a previous run's directory.
TEST(Hostile, ASymlinkedShardsFolderIsNotFollowed) {
  test::TempDir t;
  test::write_file(t / "c.tsv", corpus_lines(300));
  std::string p = write_pipeline(
      t, t / "c.tsv", "[[stage]]\nkind = \"vocabulary\"\nsize = 400\nsweep = []\n[[stage]]\nkind = \"shards\"\n",
      t / "out");
  auto first = test::run_sheaf("run " + p + " --quiet");
  ASSERT_EQ(first.status, 0) << first.err;
  test::fs::rename(t / "out/shards", t / "elsewhere");
  test::fs::create_directory_symlink(t / "elsewhere", t / "out/shards");
  std::vector<std::string> names;
  for (const auto& e : test::fs::directory_iterator(t / "elsewhere")) {
    names.push_back(e.path().string());
    test::write_file(e.path().string(), "precious");
  }
  ASSERT_FALSE(names.empty());
  auto again = test::run_sheaf("run " + p + " --quiet");
  for (const auto& n : names) EXPECT_EQ(test::read_file(n), "precious") << n;
  for (const auto& e : test::fs::directory_iterator(t / "elsewhere"))
    EXPECT_EQ(e.path().extension(), ".shard") << e.path();
  if (again.status == 0) {
    EXPECT_FALSE(test::fs::is_symlink(t / "out/shards"));
  } else {
    EXPECT_NE(again.err.find("symbolic link"), std::string::npos) << again.err;
  }
}

// 6. A directory with somebody else's manifest.json.
TEST(Hostile, AForeignManifestIsNotTakenForARun) {
  test::TempDir t;
  test::write_file(t / "c.tsv", "a\tb\n");
  std::string p = write_pipeline(t, t / "c.tsv", "", t / "out");
  for (std::string foreign : {std::string("{\"name\": \"garden-shop\", \"version\": \"1.2.0\"}\n"),
                              std::string("\x89\x01\xff random bytes \x00\x13", 20),
                              std::string("{\"tool\": \"sheaf\", \"outputs\": []}")}) {
    test::write_file(t / "out/manifest.json", foreign);
    auto r = test::run_sheaf("run " + p + " --quiet");
    EXPECT_EQ(r.status, 2) << r.err;
    EXPECT_NE(r.err.find("not a sheaf run"), std::string::npos) << r.err;
    EXPECT_EQ(test::read_file(t / "out/manifest.json"), foreign);
    EXPECT_FALSE(exists(t / "out/train.tsv"));
  }
}

// 7. Compression and line ends.
TEST(Hostile, SkippableZstdFramesBzip2AndXzAreRead) {
  test::TempDir t;
  std::string text = "good morning\tbuenos d\u00edas\nthe gate\tla puerta\n";
  test::write_file(t / "c.tsv", text);
  // A skippable frame (magic 0x184D2A5?, little-endian; RFC 8878 section 3.1.2)
  // before the data, as parallel zstd writers put one.
  std::string skippable("\x50\x2A\x4D\x18\x04\x00\x00\x00sha!", 12);
  ASSERT_EQ(test::run_shell("(zstd -q -c " + (t / "c.tsv") + " > " + (t / "z.part") + ")").status, 0);
  test::write_file(t / "c.tsv.zst", skippable + test::read_file(t / "z.part"));
  ASSERT_EQ(test::run_shell("(bzip2 -c " + (t / "c.tsv") + " > " + (t / "c.tsv.bz2") + ")").status, 0);
  ASSERT_EQ(test::run_shell("(xz -c " + (t / "c.tsv") + " > " + (t / "c.tsv.xz") + ")").status, 0);
  for (const char* name : {"c.tsv.zst", "c.tsv.bz2", "c.tsv.xz"}) {
    std::string out = t / (std::string("out-") + name);
    std::string p = write_pipeline(t, t / name, "", out);
    auto r = test::run_sheaf("run " + p + " --quiet");
    ASSERT_EQ(r.status, 0) << name << ": " << r.err;
    EXPECT_EQ(test::read_file(out + "/train.tsv"), text) << name;
  }
  std::string bad = test::read_file(t / "c.tsv.xz");
  test::write_file(t / "cut.xz", bad.substr(0, bad.size() - 10));
  auto r = test::run_sheaf("run " + write_pipeline(t, t / "cut.xz", "", t / "out-cut") + " --quiet");
  EXPECT_EQ(r.status, 1);
  EXPECT_NE(r.err.find("xz"), std::string::npos) << r.err;
  // Bytes after a complete bzip2 stream are named as trailing data (libbz2
  // reports them as BZ_DATA_ERROR_MAGIC, bzlib.h), not as a bare error code.
  test::write_file(t / "tail.bz2", test::read_file(t / "c.tsv.bz2") + "not bzip2 at all\n");
  auto tail = test::run_sheaf("run " + write_pipeline(t, t / "tail.bz2", "", t / "out-tail") + " --quiet");
  EXPECT_EQ(tail.status, 1);
  EXPECT_NE(tail.err.find("trailing garbage after stream 1"), std::string::npos) << tail.err;
  EXPECT_EQ(tail.err.find("error -5"), std::string::npos) << tail.err;
}

TEST(Hostile, CarriageReturnOnlyLineEndsAreNamed) {
  test::TempDir t;
  test::write_file(t / "c.tsv", "good morning\tbuenos d\u00edas\rthe gate\tla puerta\r");
  auto r = test::run_sheaf("run " + write_pipeline(t, t / "c.tsv", "", t / "out") + " --quiet");
  EXPECT_EQ(r.status, 1);
  EXPECT_NE(r.err.find("carriage return"), std::string::npos) << r.err;
  EXPECT_EQ(r.err.find("relax the filters"), std::string::npos) << r.err;
}

// A stray CR in line 1 is content, not a sign of CR-only line ends: a
// one-pair file is read (its pair is then refused as unsafe for TSV, with
// its bytes in rejected.tsv), and a long first line with one CR is rejected
// alone while the good pairs after it are kept.
TEST(Hostile, AStrayCarriageReturnInLineOneRefusesNothing) {
  test::TempDir t;
  test::write_file(t / "one.tsv", "Hello\rworld\tHola mundo");
  auto r = test::run_sheaf("run " + write_pipeline(t, t / "one.tsv", "", t / "out-one") + " --quiet");
  EXPECT_EQ(r.err.find("carriage return"), std::string::npos) << r.err;
  EXPECT_NE(test::read_file(t / "out-one/rejected.tsv").find("Hello\rworld\tHola mundo"), std::string::npos);
  std::string first = std::string(2 << 20, 'a') + "\r" + std::string(10, 'b') + "\tx\n";
  std::string good;
  for (int i = 0; i < 50; ++i) good += "pair number " + std::to_string(i) + "\tpar n\u00famero " + std::to_string(i) + "\n";
  test::write_file(t / "long.tsv", first + good);
  r = test::run_sheaf("run " + write_pipeline(t, t / "long.tsv", "", t / "out-long") + " --quiet");
  EXPECT_EQ(r.status, 0) << r.err;
  EXPECT_EQ(test::read_file(t / "out-long/train.tsv"), good);
}

// 8. validate and run agree; init refuses what would not load.
TEST(Hostile, ValidateRefusesWhatRunRefuses) {
  test::TempDir t;
  test::write_file(t / "c.tsv", "a\tb\n");
  const std::vector<std::string> bad = {
      "[[stage]]\nkind = \"split\"\ndev = 0.6\ntest = 0.5\n",
      "[[stage]]\nkind = \"split\"\ndev = 0.1\ntest = 100\n",
      "[[stage]]\nkind = \"split\"\nextra = [{ name = \"a b\", size = 0.1 }]\n",
      "[[stage]]\nkind = \"pattern\"\nrules = [{ name = \"x\", pattern = \"(unclosed\" }]\n",
      "[[stage]]\nkind = \"vocabulary\"\nspecial_ids = [0, 0, 1, 2]\n",
      "[[stage]]\nkind = \"vocabulary\"\npad = \"\"\n",
      "[[stage]]\nkind = \"script\"\nsource_scripts = [\"Lat\"]\n",
      "[[stage]]\nkind = \"length\"\nsource_min = 50\nsource_max = 10\n",
  };
  for (const auto& stages : bad) {
    std::string p = write_pipeline(t, t / "c.tsv", stages, t / "out");
    auto v = test::run_sheaf("validate " + p);
    EXPECT_EQ(v.status, 2) << stages << v.out;
    auto r = test::run_sheaf("run " + p + " --quiet");
    EXPECT_EQ(r.status, 2) << stages << r.err;
    EXPECT_EQ(v.err, r.err) << stages;  // the same check, the same message
  }
  // An unknown language code in [corpus] with a language stage.
  std::string p = t / "lang.toml";
  test::write_file(p, test::pipeline_text("files = [\"c.tsv\"]\nsource_lang = \"english\"\ntarget_lang = \"es\"",
                                          "[[stage]]\nkind = \"language\"\n"));
  EXPECT_EQ(test::run_sheaf("validate " + p).status, 2);

  auto neg = test::run_sheaf("init --input c.tsv --from en --to es --vocab-size -5");
  EXPECT_EQ(neg.status, 2) << neg.out;
  EXPECT_NE(neg.err.find("--vocab-size"), std::string::npos) << neg.err;
  auto lang = test::run_sheaf("init --input c.tsv --from english --to es");
  EXPECT_EQ(lang.status, 2) << lang.out;
  EXPECT_NE(lang.err.find("--from"), std::string::npos) << lang.err;
}

// 9. NaN in a decimal key.
TEST(Hostile, NanIsOutOfEveryRange) {
  test::TempDir t;
  test::write_file(t / "c.tsv", "a\tb\n");
  std::string p = write_pipeline(t, t / "c.tsv", "[[stage]]\nkind = \"length\"\n", t / "out");
  for (const char* v : {"nan", "-nan", "+nan"}) {
    auto r = test::run_sheaf("validate " + p + " --set length.max_ratio=" + v);
    EXPECT_EQ(r.status, 2) << v << r.out;
    EXPECT_NE(r.err.find("max_ratio"), std::string::npos) << r.err;
  }
}

// 10. Shards and vocabulary files: what the format does not allow is refused.
// Rewrites a shard's header (and its checksums) or one id (and the body's).
void rewrite_shard(const std::string& path, const std::function<void(ShardHeader&, std::string&)>& change) {
  std::string bytes = test::read_file(path);
  ShardHeader h;
  std::memcpy(&h, bytes.data(), sizeof h);
  change(h, bytes);
  // Format 2 (docs/shard-format.md): the body starts at byte 160; the
  // header's checksums cover bytes 0..143.
  size_t body_end = bytes.size() - 8;
  uint64_t sum = XXH3_64bits(bytes.data() + kShardHeaderSize, body_end - kShardHeaderSize);
  std::memcpy(bytes.data() + body_end, &sum, 8);
  h.body_crc32 = shard_crc32(bytes.data() + kShardHeaderSize, body_end - kShardHeaderSize);
  constexpr size_t kCovered = offsetof(ShardHeader, header_checksum);
  h.header_checksum = XXH3_64bits(&h, kCovered);
  h.header_crc32 = shard_crc32(&h, kCovered);
  std::memcpy(bytes.data(), &h, sizeof h);
  test::write_file(path, bytes);
}

TEST(Hostile, ShardFieldsTheFormatDoesNotAllowAreRefused) {
  test::TempDir t;
  test::write_file(t / "c.tsv", corpus_lines(300));
  std::string p = write_pipeline(
      t, t / "c.tsv", "[[stage]]\nkind = \"vocabulary\"\nsize = 400\nsweep = []\n[[stage]]\nkind = \"shards\"\n",
      t / "out");
  ASSERT_EQ(test::run_sheaf("run " + p + " --quiet").status, 0);
  std::string shard;
  for (const auto& e : test::fs::directory_iterator(t / "out/shards")) shard = e.path().string();
  ASSERT_FALSE(shard.empty());
  std::string good = test::read_file(shard);
  ASSERT_EQ(test::run_sheaf("inspect " + shard).status, 0);
  const std::vector<std::pair<std::string, std::function<void(ShardHeader&, std::string&)>>> cases = {
      {"reserved", [](ShardHeader& h, std::string&) { h.reserved = 7; }},
      {"order", [](ShardHeader& h, std::string&) { h.order = 9; }},
      {"flag", [](ShardHeader& h, std::string&) { h.flags |= 8; }},
      // The target side reads the source side's arrays: every count and
      // offset is consistent, but two arrays overlap.
      {"overlap",
       [](ShardHeader& h, std::string&) {
         h.target_offsets = h.source_offsets;
         h.target_ids = h.source_ids;
         h.target_count = h.source_count;
       }},
  };
  for (const auto& [what, change] : cases) {
    test::write_file(shard, good);
    rewrite_shard(shard, change);
    auto r = test::run_sheaf("inspect " + shard);
    EXPECT_EQ(r.status, 1) << what << r.out;
    EXPECT_NE(r.err.find(what), std::string::npos) << r.err;
  }
  // An id beyond the vocabulary beside the shard: inspect finds it.
  test::write_file(shard, good);
  rewrite_shard(shard, [](ShardHeader& h, std::string& bytes) {
    uint32_t big = 60000;
    if (h.id_width == 2) {
      uint16_t v = static_cast<uint16_t>(big);
      std::memcpy(bytes.data() + h.source_ids, &v, 2);
    } else {
      std::memcpy(bytes.data() + h.source_ids, &big, 4);
    }
  });
  ASSERT_TRUE(ShardReader::open(shard).ok());  // the structure is sound
  auto ids = test::run_sheaf("inspect " + shard);
  EXPECT_EQ(ids.status, 1) << ids.out;
  EXPECT_NE(ids.err.find("beyond its vocabulary"), std::string::npos) << ids.err;
  auto r = test::run_sheaf("inspect " + (t / "out"));
  EXPECT_EQ(r.status, 1) << r.out;
  EXPECT_EQ(r.out.find(" 1 records"), std::string::npos) << r.out;
}

TEST(Hostile, VocabularyCharactersMustBeWellFormedAndDistinct) {
  test::TempDir t;
  test::write_file(t / "c.tsv", corpus_lines(300));
  std::string p = write_pipeline(t, t / "c.tsv", "[[stage]]\nkind = \"vocabulary\"\nsize = 400\nsweep = []\n", t / "out");
  ASSERT_EQ(test::run_sheaf("run " + p + " --quiet").status, 0);
  std::string text = test::read_file(t / "out/vocab.shared.txt");
  ASSERT_EQ(test::run_sheaf("encode --vocab " + (t / "out/vocab.shared.txt") + " < /dev/null").status, 0);
  auto lines = test::lines_of(text);
  // A character token no merged token is made of (so changing it changes
  // nothing else), and another character token.
  std::set<std::string> parts;
  for (const auto& l : lines)
    if (l.find("\tmerged\t") != std::string::npos) {
      std::string f = l.substr(l.rfind('\t') + 1);
      parts.insert(f.substr(0, f.find('+')));
      parts.insert(f.substr(f.find('+') + 1));
    }
  size_t first = 0, other = 0;
  for (size_t i = 0; i < lines.size(); ++i) {
    if (lines[i].find("\tchar\t") == std::string::npos) continue;
    if (!parts.count(lines[i].substr(0, lines[i].find('\t')))) first = i;
    else other = i;
  }
  ASSERT_GT(first, 0u);
  ASSERT_GT(other, 0u);
  auto with = [&](const std::string& token) {
    std::vector<std::string> l = lines;
    size_t a = l[first].find("\tchar\t") + 6;
    l[first] = l[first].substr(0, a) + token;
    std::string body;
    for (const auto& x : l)
      if (x.rfind("checksum\t", 0) != 0) body += x + "\n";
    return body + "checksum\t" + hex64(XXH3_64bits(body.data(), body.size())) + "\n";
  };
  test::write_file(t / "same.txt", with(lines[first].substr(lines[first].find("\tchar\t") + 6)));
  ASSERT_EQ(test::run_sheaf("encode --vocab " + (t / "same.txt") + " < /dev/null").status, 0);
  std::string next_char = lines[other].substr(lines[other].find("\tchar\t") + 6);
  for (const std::string& bad : {std::string("\\u{D800}"), std::string("\\xFF"), std::string("\\xED\\xA0\\x80"), next_char}) {
    test::write_file(t / "bad.txt", with(bad));
    auto r = test::run_sheaf("encode --vocab " + (t / "bad.txt") + " < /dev/null");
    EXPECT_EQ(r.status, 1) << bad;
    EXPECT_NE(r.err.find("not a valid sheaf vocabulary"), std::string::npos) << bad << r.err;
  }
}

// 11. Every input byte is recoverable: rejected.tsv byte-exact for a BOM on
// line 1 and a bare CR at the end; a 50 MB line in the side file.
TEST(Hostile, EveryInputByteIsRecoverableFromTheOutputs) {
  test::TempDir t;
  std::string huge(50'000'000, 'x');
  for (size_t i = 0; i < huge.size(); i += 997) huge[i] = static_cast<char>('a' + i % 26);
  huge[1234] = '\t';
  const std::vector<std::string> lines = {"\xEF\xBB\xBFno tab on the first line", "good morning\tbuenos d\u00edas",
                                          huge, "the gate\tla puerta", "a\tb\tc", "last line, bare CR\r"};
  std::string input;
  for (size_t i = 0; i < lines.size(); ++i) input += lines[i] + (i + 1 < lines.size() ? "\n" : "");
  test::write_file(t / "c.tsv", input);
  std::string p = write_pipeline(t, t / "c.tsv", "", t / "out");
  auto r = test::run_sheaf("run " + p + " --quiet");
  ASSERT_EQ(r.status, 0) << r.err;
  // Rebuild the input from train.tsv (kept lines, in order; no stage rewrites
  // them here), rejected.tsv and the side file of over-long lines.
  auto kept = test::lines_of(test::read_file(t / "out/train.tsv"));
  std::string rejected = test::read_file(t / "out/rejected.tsv");
  std::string longs = test::read_file(t / "out/rejected-long.tsv");
  std::map<uint64_t, std::string> by_line;
  size_t pos = 0, long_pos = 0;
  while (pos < rejected.size()) {
    size_t nl = rejected.find('\n', pos);
    std::string row = rejected.substr(pos, nl - pos);
    pos = nl + 1;
    // LINE, STAGE, REASON, "-", the line's bytes (which may hold tabs).
    size_t a = row.find('\t'), b = row.find('\t', a + 1), c = row.find('\t', b + 1), d = row.find('\t', c + 1);
    uint64_t line = std::stoull(row.substr(0, a));
    std::string reason = row.substr(b + 1, c - b - 1);
    std::string text = row.substr(d + 1);
    if (reason.rfind("line-too-long:", 0) == 0) {
      // The side file's record: LINE, "-" (the side, for two files), the bytes.
      size_t n = std::stoull(reason.substr(14));
      EXPECT_EQ(text, "");
      std::string head = std::to_string(line) + "\t-\t";
      EXPECT_EQ(longs.substr(long_pos, head.size()), head);
      long_pos += head.size();
      text = longs.substr(long_pos, n);
      long_pos += n;
      EXPECT_EQ(longs.substr(long_pos, 1), "\n");
      ++long_pos;
    }
    by_line[line] = text;
  }
  std::string rebuilt;
  size_t k = 0;
  for (uint64_t line = 1; line <= lines.size(); ++line) {
    rebuilt += by_line.count(line) ? by_line[line] : kept.at(k++);
    if (line < lines.size()) rebuilt += "\n";
  }
  EXPECT_EQ(k, kept.size());
  EXPECT_EQ(long_pos, longs.size());
  EXPECT_TRUE(rebuilt == input) << "rebuilt " << rebuilt.size() << " bytes of " << input.size();
  EXPECT_EQ(by_line[1], lines[0]);
  EXPECT_EQ(by_line[6], lines[5]);
  // The side file is an output of the record.
  EXPECT_NE(test::read_file(t / "out/manifest.json").find("\"rejected-long.tsv\""), std::string::npos);
  EXPECT_EQ(test::run_sheaf("inspect " + (t / "out")).status, 0);
}

// 13. Vocabulary size, "stopped early", the sweep and the shard bound.
TEST(Hostile, VocabularySizeAndShardBoundsAreKept) {
  test::TempDir t;
  std::string text;
  for (int i = 0; i < 300; ++i)
    text += "seed " + std::to_string(i) + " \u00e9\u00f1\u00fc\u00df\u0416\u03b1\u05d0\u4e2d\u3042\tsemilla " +
            std::to_string(i) + "\n";
  test::write_file(t / "c.tsv", text);
  // size below the alphabet, with a larger sweep size: an error, not a
  // larger vocabulary.
  std::string p = write_pipeline(t, t / "c.tsv", "[[stage]]\nkind = \"vocabulary\"\nsize = 262\nsweep = [2000]\n", t / "out");
  auto r = test::run_sheaf("run " + p + " --quiet");
  EXPECT_EQ(r.status, 1) << r.err;
  EXPECT_NE(r.err.find("raise size to at least"), std::string::npos) << r.err;
  // A vocabulary that reached its size did not stop early, even when the
  // learner ran out of pairs before a larger sweep size; the sweep shows what
  // it reached.
  p = write_pipeline(t, t / "c.tsv",
                     "[[stage]]\nkind = \"vocabulary\"\nsize = 300\nsweep = [50000]\n[[stage]]\nkind = \"shards\"\n"
                     "max_bytes = 64\n",
                     t / "out2");
  r = test::run_sheaf("run " + p);
  ASSERT_EQ(r.status, 0) << r.err;
  EXPECT_EQ(r.out.find("stopped early"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("50000 (reached "), std::string::npos) << r.out;
  // Every shard holds at most max_bytes of ids (these pairs are far smaller).
  int shards = 0;
  for (const auto& e : test::fs::directory_iterator(t / "out2/shards")) {
    auto i = test::run_sheaf("inspect " + e.path().string());
    ASSERT_EQ(i.status, 0) << i.err;
    auto count = [&](const std::string& label) {
      size_t at = i.out.find(label);
      return std::stoull(i.out.substr(i.out.find_first_not_of(' ', at + label.size())));
    };
    uint64_t width = count("id width") / 8;
    EXPECT_LE((count("source ids") + count("target ids")) * width, 64u) << e.path();
    ++shards;
  }
  EXPECT_GT(shards, 10);
}

// 14. What init writes works wherever the file is saved.
TEST(Hostile, InitWritesPathsThatWorkFromAnotherFolder) {
  test::TempDir t;
  test::write_file(t / "c.tsv", corpus_lines(50));
  test::fs::create_directory(t / "cfg");
  auto r = test::run_shell("cd " + t.path() + " && " + test::binary() +
                           " init --input c.tsv --from en --to es --vocab-size 300 > cfg/p.toml && " + test::binary() +
                           " run cfg/p.toml --quiet --until split");
  EXPECT_EQ(r.status, 0) << r.err;
  // A missing input names where it looked.
  test::write_file(t / "cfg/q.toml", test::pipeline_text(std::string("files = [\"missing.tsv\"]\n") + kLangs, ""));
  auto m = test::run_shell("cd " + t.path() + " && " + test::binary() + " run cfg/q.toml --quiet");
  EXPECT_EQ(m.status, 1);
  EXPECT_NE(m.err.find("relative to the pipeline file"), std::string::npos) << m.err;
}

// 15. Messages.
TEST(Hostile, MessagesSayWhatIsWrongInPlainWords) {
  test::TempDir t;
  test::write_file(t / "c.tsv", "a\tb\n");
  std::string p = write_pipeline(t, t / "c.tsv", "[[stage]]\nkind = \"length\"\n[[stage]]\nkind = \"vocabulary\"\n",
                                 t / "out");
  auto typo = test::run_sheaf("validate " + p + " --set length.sourc_max=80");
  EXPECT_EQ(typo.status, 2);
  EXPECT_NE(typo.err.find("sheaf: --set length.sourc_max: unknown key"), std::string::npos) << typo.err;
  EXPECT_NE(typo.err.find("did you mean \"source_max\""), std::string::npos) << typo.err;
  auto range = test::run_sheaf("validate " + p + " --set vocabulary.size=100");
  EXPECT_NE(range.err.find("sheaf: --set vocabulary.size: "), std::string::npos) << range.err;
  EXPECT_NE(range.err.find("from 261 to 4000000000, not 100"), std::string::npos) << range.err;
  auto big = test::run_sheaf("validate " + p + " --set vocabulary.size=99999999999");
  EXPECT_NE(big.err.find("not 99999999999"), std::string::npos) << big.err;
  auto input = test::run_sheaf("run " + p + " --input a.tsv --input b.tsv");
  EXPECT_NE(input.err.find("--input names one file for layout \"tsv\""), std::string::npos) << input.err;
  auto cmd = test::run_sheaf("frobnicate");
  EXPECT_EQ(cmd.status, 2);
  EXPECT_NE(cmd.err.find("unknown command \"frobnicate\""), std::string::npos) << cmd.err;
  // stats on a directory whose record is garbage.
  test::write_file(t / "junk/manifest.json", "garbage");
  test::write_file(t / "junk/summary.json", "{\"splits\": 5}");
  auto stats = test::run_sheaf("stats " + (t / "junk"));
  EXPECT_EQ(stats.status, 1) << stats.out;
  EXPECT_EQ(stats.err.find("terminate"), std::string::npos) << stats.err;
  // A UTF-32 file gets a UTF-32 conversion hint.
  std::string wide;
  for (char c : std::string("good morning\tbuenos dias\n")) wide += std::string(1, c) + std::string(3, '\0');
  test::write_file(t / "w.tsv", wide);
  auto w = test::run_sheaf("run " + write_pipeline(t, t / "w.tsv", "", t / "out-w") + " --quiet");
  EXPECT_NE(w.err.find("iconv -f UTF-32"), std::string::npos) << w.err;
}

// Every file sheaf reads back goes through a checked reader: a damaged
// summary.json or manifest.json is an error (exit 1), never an abort.
TEST(Hostile, DamagedRecordsAreErrorsNotAborts) {
  test::TempDir t;
  test::write_file(t / "c.tsv", corpus_lines(20));
  auto r = test::run_sheaf("run " + write_pipeline(t, t / "c.tsv", "", t / "out") + " --quiet");
  ASSERT_EQ(r.status, 0) << r.err;
  std::string summary = test::read_file(t / "out/summary.json");
  std::string manifest = test::read_file(t / "out/manifest.json");
  // summary.json: valid JSON, wrong types.
  for (const std::string& damaged : {std::string("{\"format\": \"sheaf-summary\", \"counts\": 7}"),
                                     std::string("{\"format\": \"sheaf-summary\", \"counts\": {\"read\": \"x\"}}")}) {
    test::write_file(t / "out/summary.json", damaged);
    auto s = test::run_sheaf("stats " + (t / "out"));
    EXPECT_EQ(s.status, 1) << damaged << s.err;
    EXPECT_NE(s.err.find("summary.json"), std::string::npos) << s.err;
    EXPECT_EQ(s.err.find("terminate"), std::string::npos) << s.err;
  }
  test::write_file(t / "out/summary.json", summary);
  // manifest.json: a checksum that is not hexadecimal, a count that is a string.
  size_t at = manifest.find("\"xxh3_64\": \"", manifest.find("\"outputs\""));
  ASSERT_NE(at, std::string::npos);
  for (const std::string& damaged :
       {manifest.substr(0, at) + "\"xxh3_64\": \"zz" + manifest.substr(at + 12),
        manifest.substr(0, at) + "\"xxh3_64\": 12, \"x\": \"" + manifest.substr(at + 12)}) {
    test::write_file(t / "out/manifest.json", damaged);
    for (const char* cmd : {"inspect ", "stats "}) {
      auto s = test::run_sheaf(cmd + (t / "out"));
      EXPECT_EQ(s.status, 1) << cmd << s.err;
      EXPECT_EQ(s.err.find("terminate"), std::string::npos) << cmd << s.err;
    }
    // A new run into the directory does not take it for a run of its own.
    auto again = test::run_sheaf("run " + (t / "p.toml") + " --quiet");
    EXPECT_EQ(again.status, 2) << again.err;
  }
}

// 16. The mean length ratio is exact.
TEST(Hostile, SummaryMeanRatioIsTheExactMean) {
  test::TempDir t;
  // Character ratios 2/3, 10/9 and 8/9: mean 0.8889 (floored per pair to
  // 0.66, 1.11, 0.88 it would be 0.8833).
  test::write_file(t / "c.tsv", "ab\tcde\nabcdefghij\tabcdefghi\nabcdefgh\tabcdefghi\n");
  auto r = test::run_sheaf("run " + write_pipeline(t, t / "c.tsv", "", t / "out") + " --quiet");
  ASSERT_EQ(r.status, 0) << r.err;
  std::string s = test::read_file(t / "out/summary.json");
  size_t at = s.find("\"length_ratio\"");
  ASSERT_NE(at, std::string::npos) << s;
  size_t mean = s.find("\"mean\"", at);
  ASSERT_NE(mean, std::string::npos);
  double v = std::stod(s.substr(s.find(':', mean) + 1));
  EXPECT_NEAR(v, (2.0 / 3 + 10.0 / 9 + 8.0 / 9) / 3, 1e-4) << s.substr(at, 300);
}

// 17. init's comments line up, the special tokens' lines included.
TEST(Hostile, InitCommentsAreAligned) {
  auto r = test::run_sheaf("init --input c.tsv --from en --to es");
  ASSERT_EQ(r.status, 0);
  int checked = 0;
  for (const auto& line : test::lines_of(r.out)) {
    size_t hash = line.find("  # ");
    if (line.empty() || line[0] == '#' || hash == std::string::npos) continue;
    // Columns in code points (the spellings hold non-ASCII brackets).
    auto width = [](std::string_view s) {
      size_t n = 0;
      for (char c : s) n += (static_cast<unsigned char>(c) & 0xC0) != 0x80;
      return n;
    };
    size_t content = hash;
    while (content > 0 && line[content - 1] == ' ') --content;
    if (width(line.substr(0, content)) > 32) continue;
    EXPECT_EQ(width(line.substr(0, line.find("# ", content))), 34u) << line;
    ++checked;
  }
  EXPECT_GT(checked, 20);
}

}  // namespace
}  // namespace sheaf
