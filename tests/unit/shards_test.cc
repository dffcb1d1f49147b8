// Shards, the summary and the report, read back by every reader we have.
#include <gtest/gtest.h>

#include <nlohmann/json.hpp>

#include <fstream>

#include <xxhash.h>
#include <zlib.h>

#include "core/stats.h"
#include "shards/shard_reader.h"
#include "shards/shard_writer.h"
#include "subword/vocabulary.h"
#include "test_util.h"

namespace sheaf {
namespace {

using nlohmann::json;

// One demo run shared by the tests of this file (they only read it).
class DemoRun : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    dir_ = new test::TempDir;
    auto r = test::run_sheaf("run " + test::source_dir() + "/pipelines/demo.toml --quiet --out " + (*dir_ / "run"));
    ASSERT_EQ(r.status, 0) << r.err;
    manifest_ = new json(json::parse(test::read_file(*dir_ / "run/manifest.json")));
  }
  static void TearDownTestSuite() {
    delete manifest_;
    delete dir_;
  }
  static std::string run(const std::string& rel = "") { return *dir_ / ("run/" + rel); }
  static std::vector<std::string> shards_of(const std::string& split) {
    std::vector<std::string> out;
    for (const auto& o : (*manifest_)["outputs"])
      if (o["kind"] == "shard" && o["split"] == split) out.push_back(o["path"]);
    return out;
  }
  static test::TempDir* dir_;
  static json* manifest_;
};
test::TempDir* DemoRun::dir_ = nullptr;
json* DemoRun::manifest_ = nullptr;

TEST_F(DemoRun, DecodingTheShardsGivesEachSplitFileBack) {
  for (const char* split : {"train", "dev", "test"}) {
    auto shards = shards_of(split);
    ASSERT_FALSE(shards.empty()) << split;
    std::string all;
    for (const auto& s : shards) {
      auto r = test::run_sheaf("decode " + run(s));
      ASSERT_EQ(r.status, 0) << r.err;
      all += r.out;
    }
    EXPECT_EQ(all, test::read_file(run(std::string(split) + ".tsv"))) << split;
  }
  EXPECT_GT(shards_of("train").size(), 1u);  // max_pairs = 500 in the demo
}

TEST_F(DemoRun, ShardHeadersAreConsistent) {
  auto vocab = Vocabulary::load(run("vocab.shared.txt"));
  ASSERT_TRUE(vocab.ok()) << vocab.error().describe();
  uint64_t pairs = 0;
  for (const auto& s : shards_of("train")) {
    auto r = ShardReader::open(run(s));
    ASSERT_TRUE(r.ok()) << r.error().describe();
    const ShardHeader& h = r->header();
    EXPECT_EQ(h.id_width, 2u);
    EXPECT_EQ(h.source_offsets % 64, 0u);
    EXPECT_EQ(h.source_ids % 64, 0u);
    EXPECT_EQ(h.target_offsets % 64, 0u);
    EXPECT_EQ(h.target_ids % 64, 0u);
    EXPECT_EQ(h.flags, uint32_t{kHasEos});
    EXPECT_LT(r->max_id(0), 1200u);
    std::vector<uint32_t> ids;
    r->ids(0, 1, ids);
    ASSERT_FALSE(ids.empty());
    EXPECT_EQ(ids.back(), 3u);  // end-of-sequence id
    EXPECT_EQ(h.version, 2u);
    for (int k = 0; k < 4; ++k) {
      EXPECT_EQ(h.source_specials[k], vocab->special(static_cast<Special>(k))) << k;
      EXPECT_EQ(h.target_specials[k], vocab->special(static_cast<Special>(k))) << k;
    }
    pairs += h.pairs;
  }
  EXPECT_EQ(pairs, (*manifest_)["splits"]["train"].get<uint64_t>());
}

// The writer holds ids in 1 MiB blocks and streams the file in two passes;
// pairs whose ids run across blocks, in input and length order, at both id
// widths, read back exactly; the body is, byte for byte, the one
// docs/shard-format.md lays out (built here from the spec, whole), and its
// CRC-32 is zlib's over the bytes the spec names.
TEST(ShardWriter, PairsAcrossBlocksReadBackInEitherOrder) {
  test::TempDir dir;
  for (uint32_t width : {2u, 4u}) {
    for (ShardOrder order : {kInputOrder, kLengthOrder}) {
      ShardSettings set;
      set.id_width = width;
      set.order = order;
      ShardWriter w(set);
      std::vector<std::pair<std::vector<uint32_t>, std::vector<uint32_t>>> pairs;
      uint32_t x = 12345;
      auto next = [&] { return (x = x * 1103515245u + 12345u) >> 8; };
      // At width 4, ids past 16 bits: a writer that narrowed them would fail.
      const uint32_t top = width == 2 ? 30000 : 5000000;
      for (int i = 0; i < 3000; ++i) {
        size_t ns = i == 1000 ? 700000 : next() % 40, nt = i == 2000 ? 400000 : next() % 40;
        std::vector<uint32_t> a(ns), b(nt);
        for (auto& v : a) v = next() % top;
        for (auto& v : b) v = next() % top;
        w.add(a, b);
        pairs.emplace_back(std::move(a), std::move(b));
      }
      std::string path = dir / ("s" + std::to_string(width) + std::to_string(order) + ".shard");
      auto written = w.write(path, 7);
      ASSERT_TRUE(written.ok()) << written.error().message();
      EXPECT_EQ(w.pairs(), 0u);
      std::vector<size_t> want(pairs.size());
      for (size_t i = 0; i < want.size(); ++i) want[i] = i;
      if (order == kLengthOrder)
        std::stable_sort(want.begin(), want.end(), [&](size_t a, size_t b) {
          return std::pair(pairs[a].first.size(), pairs[a].second.size()) <
                 std::pair(pairs[b].first.size(), pairs[b].second.size());
        });
      auto r = ShardReader::open(path);
      ASSERT_TRUE(r.ok()) << r.error().message();
      EXPECT_EQ(r->header().shard_index, 7u);
      EXPECT_EQ(r->header().id_width, width);
      std::string bytes = test::read_file(path);
      EXPECT_EQ(bytes.size(), r->header().file_size);
      EXPECT_EQ(bytes.size(), written->size);
      uLong crc = crc32(0, reinterpret_cast<const Bytef*>(bytes.data()) + kShardHeaderSize,
                        static_cast<uInt>(bytes.size() - kShardHeaderSize - 8));
      EXPECT_EQ(crc, r->header().body_crc32);
      // The body from the spec: zeros to byte 192; per side the (pairs + 1)
      // u64 offsets and the ids at the id width, each padded with zeros to a
      // multiple of 64; then the XXH3-64 of all of it.
      std::string body(192 - kShardHeaderSize, '\0');
      auto pad = [&] { body.resize(align_up(kShardHeaderSize + body.size()) - kShardHeaderSize, '\0'); };
      for (int side = 0; side < 2; ++side) {
        uint64_t end = 0;
        body.append(reinterpret_cast<const char*>(&end), 8);
        for (size_t i : want) {
          end += (side == 0 ? pairs[i].first : pairs[i].second).size();
          body.append(reinterpret_cast<const char*>(&end), 8);
        }
        pad();
        for (size_t i : want)
          for (uint32_t id : side == 0 ? pairs[i].first : pairs[i].second) body.append(reinterpret_cast<const char*>(&id), width);
        pad();
      }
      uint64_t sum = XXH3_64bits(body.data(), body.size());
      body.append(reinterpret_cast<const char*>(&sum), 8);
      EXPECT_TRUE(bytes.compare(kShardHeaderSize, std::string::npos, body) == 0) << "width " << width << " order " << order;
      ASSERT_EQ(r->pairs(), pairs.size());
      std::vector<uint32_t> got;
      for (size_t k = 0; k < want.size(); ++k) {
        r->ids(k, 0, got);
        ASSERT_EQ(got, pairs[want[k]].first) << "pair " << k << " width " << width << " order " << order;
        r->ids(k, 1, got);
        ASSERT_EQ(got, pairs[want[k]].second) << "pair " << k << " width " << width << " order " << order;
      }
    }
  }
}

// A shard written in format 1 (before the header held the special ids), as
// the fuzz seed corpus keeps it, is still read.
TEST(ShardFormat, VersionOneIsStillRead) {
  auto r = ShardReader::open(test::source_dir() + "/tests/fuzz/corpus/shard_reader/dev.shard");
  ASSERT_TRUE(r.ok()) << r.error().describe();
  EXPECT_EQ(r->header().version, 1u);
  EXPECT_EQ(r->header().source_specials[kPad], kUnknownSpecial);
  EXPECT_EQ(r->pairs(), 63u);
  std::vector<uint32_t> ids;
  r->ids(62, 1, ids);
  ASSERT_FALSE(ids.empty());
  EXPECT_EQ(ids.back(), 3u);
}

TEST_F(DemoRun, InspectVerifiesAShardAndAWholeRun) {
  auto one = test::run_sheaf("inspect " + run(shards_of("dev")[0]));
  EXPECT_EQ(one.status, 0) << one.err;
  EXPECT_NE(one.out.find("checksums verified"), std::string::npos);
  auto all = test::run_sheaf("inspect " + run());
  EXPECT_EQ(all.status, 0) << all.err;
  EXPECT_EQ(all.out.find("PROBLEM"), std::string::npos) << all.out;
}

TEST_F(DemoRun, FlippedBytesAndTruncationAreDetected) {
  std::string good = test::read_file(run(shards_of("dev")[0]));
  test::TempDir t;
  // A flipped byte in the header, the offsets, the ids, the padding and the
  // final checksum; and truncations.
  for (size_t at : {size_t{20}, size_t{130}, good.size() / 2, good.size() - 9, good.size() - 1}) {
    std::string bad = good;
    bad[at] ^= 0x10;
    test::write_file(t / "bad.shard", bad);
    EXPECT_FALSE(ShardReader::open(t / "bad.shard").ok()) << "byte " << at;
    auto r = test::run_sheaf("inspect " + (t / "bad.shard"));
    EXPECT_EQ(r.status, 1) << "byte " << at;
    EXPECT_NE(r.out.find("DAMAGED"), std::string::npos) << r.out;
  }
  for (size_t n : {size_t{0}, size_t{100}, size_t{200}, good.size() - 8, good.size() - 1}) {
    test::write_file(t / "short.shard", good.substr(0, n));
    EXPECT_FALSE(ShardReader::open(t / "short.shard").ok()) << n;
  }
}

TEST_F(DemoRun, InspectRunReportsAChangedFile) {
  test::TempDir t;
  std::filesystem::copy(run(), t / "copy", std::filesystem::copy_options::recursive);
  test::write_file(t / "copy/dev.tsv", "changed\tcambiado\n");
  auto r = test::run_sheaf("inspect " + (t / "copy"));
  EXPECT_EQ(r.status, 1);
  EXPECT_NE(r.out.find("PROBLEM  dev.tsv"), std::string::npos) << r.out;
}

TEST_F(DemoRun, DecodeRefusesTheWrongVocabulary) {
  test::TempDir t;
  test::write_file(t / "other.tsv", "one\tuno\ntwo\tdos\n");
  test::write_file(t / "p.toml", test::pipeline_text("files = [\"other.tsv\"]\nsource_lang = \"en\"\ntarget_lang = \"es\"",
                                                     "[[stage]]\nkind = \"vocabulary\"\nsize = 300\nsweep = []\n"));
  ASSERT_EQ(test::run_sheaf("run " + (t / "p.toml") + " --quiet").status, 0);
  auto r = test::run_sheaf("decode " + run(shards_of("dev")[0]) + " --vocab " + (t / "out/vocab.shared.txt"));
  EXPECT_EQ(r.status, 1);
  EXPECT_NE(r.err.find("no vocabulary matches"), std::string::npos) << r.err;
}

// Source of truth for the statistics: wc -l, wc -w and the file size.
TEST_F(DemoRun, SummaryAgreesWithWcAndFileSizes) {
  json s = json::parse(test::read_file(run("summary.json")));
  EXPECT_EQ(s["format"], "sheaf-summary");
  for (const char* split : {"train", "dev", "test"}) {
    std::string file = run(std::string(split) + ".tsv");
    auto wc_l = test::run_shell("wc -l < " + file);
    EXPECT_EQ(std::stoull(wc_l.out), s["splits"][split]["pairs"].get<uint64_t>()) << split;
    // Space-separated words of each side (wc -w) against the summary's word
    // count is not the same definition (UAX #29 skips punctuation), so the
    // character count is checked exactly and words against wc within reason.
    uint64_t bytes = test::read_file(file).size();
    uint64_t chars = 0;
    for (const char* side : {"source", "target"}) chars += s["splits"][split][side]["chars"]["sum"].get<uint64_t>();
    auto wc_m = test::run_shell("LC_ALL=C.UTF-8 wc -m < " + file);
    uint64_t lines = s["splits"][split]["pairs"].get<uint64_t>();
    EXPECT_EQ(chars + 2 * lines, std::stoull(wc_m.out)) << split;  // + a tab and a newline per line
    EXPECT_LE(chars, bytes);
    auto wc_w = test::run_shell("cut -f1 " + file + " | wc -w");
    uint64_t words = s["splits"][split]["source"]["words"]["sum"].get<uint64_t>();
    EXPECT_NEAR(static_cast<double>(words), static_cast<double>(std::stoull(wc_w.out)), 0.05 * static_cast<double>(words)) << split;
  }
  EXPECT_EQ(s["funnel"].front()["in"], (*manifest_)["counts"]["read"]);
  // Examples of rejections are kept per reason.
  bool found = false;
  for (const auto& st : s["funnel"])
    if (st["name"] == "dedup") found = st["examples"]["duplicate"].size() == 3;
  EXPECT_TRUE(found);
  ASSERT_TRUE(s.contains("vocabulary"));
  EXPECT_EQ(s["vocabulary"]["vocabularies"][0]["sweep"]["source"].size(), 4u);
  EXPECT_TRUE(s["vocabulary"]["alphabet_coverage_of_other_splits"].contains("dev"));
  // Learned on train, so every merged token comes from train text; a few may
  // still be unused after encoding (a merge can be consumed by later merges).
  ASSERT_TRUE(s["vocabulary"].contains("unused_in_train"));
  uint64_t unused = s["vocabulary"]["unused_in_train"]["shared"].get<uint64_t>();
  EXPECT_LT(unused, 1200u - 260u);
}

TEST_F(DemoRun, StatsPrintsTheSummaryAgain) {
  auto r = test::run_sheaf("stats " + run());
  ASSERT_EQ(r.status, 0) << r.err;
  EXPECT_NE(r.out.find("pairs read 2,254"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("split overlap: none"), std::string::npos);
  auto j = test::run_sheaf("stats --json " + run());
  EXPECT_EQ(j.out, test::read_file(run("summary.json")));
  EXPECT_EQ(test::run_sheaf("stats /nonexistent").status, 1);
}

// Chromium renders report.html (a page with its SVG charts), when installed.
TEST_F(DemoRun, ReportRendersInHeadlessChromium) {
  std::string html = test::read_file(run("report.html"));
  EXPECT_NE(html.find("<svg"), std::string::npos);
  EXPECT_EQ(html.find("<script"), std::string::npos);
  EXPECT_EQ(html.find("http://"), std::string::npos);
  if (!std::filesystem::exists("/usr/bin/chromium"))
    GTEST_SKIP() << "Chromium is not installed (Debian package chromium; scripts/install-deps build test installs it)";
  test::TempDir t;
  auto r = test::run_shell(
      "timeout 120 /usr/bin/chromium --headless --no-sandbox --disable-gpu --disable-quic --no-first-run "
      "--disable-background-networking --disable-component-update --disable-sync --user-data-dir=" + (t / "profile") +
      " --dump-dom file://" + run("report.html"));
  ASSERT_EQ(r.status, 0) << r.err;
  EXPECT_NE(r.out.find("sheaf run report"), std::string::npos);
  EXPECT_NE(r.out.find("<polyline"), std::string::npos);  // the sweep chart survived parsing
}

TEST(Stats, NearestRankPercentilesOnHandComputedCases) {
  // Nearest rank: the value at rank ceil(p/100 * N).
  std::vector<uint64_t> v = {15, 20, 35, 40, 50};
  EXPECT_EQ(nearest_rank(v, 5), 15u);    // ceil(0.25) = 1
  EXPECT_EQ(nearest_rank(v, 30), 20u);   // ceil(1.5) = 2
  EXPECT_EQ(nearest_rank(v, 40), 20u);   // ceil(2.0) = 2
  EXPECT_EQ(nearest_rank(v, 50), 35u);   // ceil(2.5) = 3
  EXPECT_EQ(nearest_rank(v, 100), 50u);
  Histogram h;
  for (uint64_t x : v) h.add(x);
  Distribution d = h.summary();
  EXPECT_EQ(d.p50, 35u);
  EXPECT_EQ(d.p90, 50u);  // ceil(4.5) = 5
  EXPECT_EQ(d.min, 15u);
  EXPECT_DOUBLE_EQ(d.mean, 32.0);
  EXPECT_EQ(h.bins(20, 3), (std::vector<uint64_t>{1, 2, 2}));  // [0,20) [20,40) [40,...)
}

}  // namespace
}  // namespace sheaf
