// Reading corpora: every layout and compression gives the same pairs; line
// endings, byte-order marks, bad lines and whole-file problems.
#include <gtest/gtest.h>

#include <zlib.h>
#include <xxhash.h>
#include <zstd.h>

#include "io/pair_reader.h"
#include "test_util.h"

namespace sheaf {
namespace {

using Pairs = std::vector<std::pair<std::string, std::string>>;

struct ReadResult {
  Pairs kept;
  std::vector<std::pair<uint64_t, std::string>> dropped;  // line, reason
  std::optional<Error> error;
};

ReadResult read_all(Layout layout, const std::vector<std::string>& files, size_t max_line = 1 << 20) {
  CorpusSpec spec;
  spec.layout = layout;
  spec.files = files;
  spec.source_field = "en";
  spec.target_field = "es";
  spec.max_line_bytes = max_line;
  ReadResult r;
  auto reader = PairReader::open(spec, files);
  if (!reader.ok()) {
    r.error = reader.error();
    return r;
  }
  for (;;) {
    PairBatch b;
    auto more = (*reader)->next(b, 3, 1 << 20);  // small batches cross boundaries
    if (!more.ok()) {
      r.error = more.error();
      return r;
    }
    if (!*more) break;
    for (const Pair& p : b.pairs) {
      if (p.kept()) r.kept.emplace_back(std::string(p.text[0]), std::string(p.text[1]));
      else r.dropped.emplace_back(p.line, p.reason);
    }
  }
  return r;
}

const Pairs kPairs = {{"Open daily.", "Abierto a diario."},
                      {"Entry is free.", "La entrada es gratuita."},
                      {"Café «Olmo»", "Cafetería «Olmo»"},
                      {"Last one", "Última"}};

std::string tsv_of(const Pairs& p, const char* eol = "\n") {
  std::string s;
  for (const auto& [a, b] : p) s += a + "\t" + b + eol;
  return s;
}

std::string gzip_of(const std::string& s) {
  z_stream zs{};
  deflateInit2(&zs, 6, Z_DEFLATED, 15 + 16, 8, Z_DEFAULT_STRATEGY);
  std::string out(deflateBound(&zs, s.size()) + 64, '\0');
  zs.next_in = reinterpret_cast<Bytef*>(const_cast<char*>(s.data()));
  zs.avail_in = static_cast<uInt>(s.size());
  zs.next_out = reinterpret_cast<Bytef*>(out.data());
  zs.avail_out = static_cast<uInt>(out.size());
  deflate(&zs, Z_FINISH);
  out.resize(zs.total_out);
  deflateEnd(&zs);
  return out;
}

std::string zstd_of(const std::string& s) {
  std::string out(ZSTD_compressBound(s.size()), '\0');
  out.resize(ZSTD_compress(out.data(), out.size(), s.data(), s.size(), 3));
  return out;
}

TEST(PairReader, AllLayoutsAndCompressionsGiveTheSamePairs) {
  test::TempDir t;
  std::string tsv = tsv_of(kPairs);
  test::write_file(t / "c.tsv", tsv);
  test::write_file(t / "c.tsv.gz", gzip_of(tsv));
  test::write_file(t / "c.tsv.zst", zstd_of(tsv));
  test::write_file(t / "no-suffix", zstd_of(tsv));  // detected from content, not name
  std::string en, es, jsonl;
  for (const auto& [a, b] : kPairs) {
    en += a + "\n";
    es += b + "\n";
    jsonl += "{\"en\": \"" + a + "\", \"es\": \"" + b + "\", \"id\": 3}\n";
  }
  test::write_file(t / "c.en", en);
  test::write_file(t / "c.es.gz", gzip_of(es));
  test::write_file(t / "c.jsonl", jsonl);
  EXPECT_EQ(read_all(Layout::kTsv, {t / "c.tsv"}).kept, kPairs);
  EXPECT_EQ(read_all(Layout::kTsv, {t / "c.tsv.gz"}).kept, kPairs);
  EXPECT_EQ(read_all(Layout::kTsv, {t / "c.tsv.zst"}).kept, kPairs);
  EXPECT_EQ(read_all(Layout::kTsv, {t / "no-suffix"}).kept, kPairs);
  EXPECT_EQ(read_all(Layout::kAligned, {t / "c.en", t / "c.es.gz"}).kept, kPairs);
  EXPECT_EQ(read_all(Layout::kJsonl, {t / "c.jsonl"}).kept, kPairs);
}

TEST(PairReader, ConcatenatedGzipMembersAreOneStream) {
  test::TempDir t;
  test::write_file(t / "c.gz", gzip_of(tsv_of({kPairs[0], kPairs[1]})) + gzip_of(tsv_of({kPairs[2], kPairs[3]})));
  EXPECT_EQ(read_all(Layout::kTsv, {t / "c.gz"}).kept, kPairs);
}

TEST(PairReader, CrlfAndByteOrderMarkAreRemoved) {
  test::TempDir t;
  test::write_file(t / "c.tsv", "\xEF\xBB\xBF" + tsv_of(kPairs, "\r\n"));
  EXPECT_EQ(read_all(Layout::kTsv, {t / "c.tsv"}).kept, kPairs);
  // A last line without a newline is read too.
  std::string s = tsv_of(kPairs);
  s.pop_back();
  test::write_file(t / "d.tsv", s);
  EXPECT_EQ(read_all(Layout::kTsv, {t / "d.tsv"}).kept, kPairs);
}

TEST(PairReader, BadLinesAreDroppedWithReasons) {
  test::TempDir t;
  test::write_file(t / "c.tsv", std::string("a\tb\nno tab here\nx\ty\tz\nnul\0byte\tq\n", 33) + "ok\tbien\n");
  auto r = read_all(Layout::kTsv, {t / "c.tsv"});
  ASSERT_FALSE(r.error);
  EXPECT_EQ(r.kept, (Pairs{{"a", "b"}, {"ok", "bien"}}));
  ASSERT_EQ(r.dropped.size(), 3u);
  EXPECT_EQ(r.dropped[0], (std::pair<uint64_t, std::string>{2, "no-tab"}));
  EXPECT_EQ(r.dropped[1], (std::pair<uint64_t, std::string>{3, "extra-tab"}));
  EXPECT_EQ(r.dropped[2], (std::pair<uint64_t, std::string>{4, "nul-byte"}));
}

TEST(PairReader, JsonlProblemsAreDroppedWithReasons) {
  test::TempDir t;
  test::write_file(t / "c.jsonl", "{\"en\":\"a\",\"es\":\"b\"}\nnot json\n{\"en\":\"a\"}\n{\"en\":1,\"es\":\"b\"}\n[1]\n");
  auto r = read_all(Layout::kJsonl, {t / "c.jsonl"});
  EXPECT_EQ(r.kept, (Pairs{{"a", "b"}}));
  ASSERT_EQ(r.dropped.size(), 4u);
  EXPECT_EQ(r.dropped[0].second, "bad-json");
  EXPECT_EQ(r.dropped[1].second, "missing-field:es");
  EXPECT_EQ(r.dropped[2].second, "not-a-string:en");
  EXPECT_EQ(r.dropped[3].second, "bad-json");
}

TEST(PairReader, OversizeLineIsSkippedInBoundedMemory) {
  test::TempDir t;
  std::string big(5000, 'x');
  test::write_file(t / "c.tsv", "a\tb\n" + big + "\t" + big + "\nc\td\n" + big);
  auto r = read_all(Layout::kTsv, {t / "c.tsv"}, 1000);
  ASSERT_FALSE(r.error);
  EXPECT_EQ(r.kept, (Pairs{{"a", "b"}, {"c", "d"}}));
  ASSERT_EQ(r.dropped.size(), 2u);
  EXPECT_EQ(r.dropped[0], (std::pair<uint64_t, std::string>{2, "line-too-long:10001"}));
  EXPECT_EQ(r.dropped[1], (std::pair<uint64_t, std::string>{4, "line-too-long:5000"}));
}

TEST(PairReader, AlignedFilesOfDifferentLengthsAreAnError) {
  test::TempDir t;
  test::write_file(t / "a.en", "1\n2\n3\n");
  test::write_file(t / "a.es", "1\n2\n3\n4\n5\n");
  auto r = read_all(Layout::kAligned, {t / "a.en", t / "a.es"});
  ASSERT_TRUE(r.error);
  EXPECT_EQ(r.error->kind(), ErrorKind::kInput);
  const std::string& m = r.error->message();
  EXPECT_NE(m.find(t / "a.en" + " has 3"), std::string::npos) << m;
  EXPECT_NE(m.find(t / "a.es" + " has 5"), std::string::npos) << m;
}

TEST(PairReader, WideEncodingsAreRefused) {
  test::TempDir t;
  std::string utf16le = "\xFF\xFE";
  for (char c : std::string("a\tb\n")) utf16le += std::string(1, c) + '\0';
  test::write_file(t / "le.tsv", utf16le);
  std::string no_bom;
  for (char c : std::string("Open daily.\tAbierto a diario.\nEntry is free.\tGratis.\n")) no_bom += std::string(1, c) + '\0';
  test::write_file(t / "nobom.tsv", no_bom);
  test::write_file(t / "le.tsv.gz", gzip_of(utf16le));
  for (const char* f : {"le.tsv", "nobom.tsv", "le.tsv.gz"}) {
    auto r = read_all(Layout::kTsv, {t / f});
    ASSERT_TRUE(r.error) << f;
    EXPECT_NE(r.error->message().find("UTF-16"), std::string::npos) << r.error->message();
  }
}

TEST(PairReader, CorruptAndTruncatedCompressionAreErrorsWithOffsets) {
  test::TempDir t;
  std::string big;
  for (int i = 0; i < 20000; ++i) big += "pair number " + std::to_string(i) + "\tpar " + std::to_string(i * 7) + "\n";
  std::string gz = gzip_of(big), zs = zstd_of(big);
  test::write_file(t / "trunc.gz", gz.substr(0, gz.size() / 2));
  test::write_file(t / "trunc.zst", zs.substr(0, zs.size() / 2));
  std::string bad = gz;
  bad[bad.size() / 2] ^= 0x55;
  bad[bad.size() / 2 + 1] ^= 0x55;
  test::write_file(t / "bad.gz", bad);
  for (const char* f : {"trunc.gz", "trunc.zst", "bad.gz"}) {
    auto r = read_all(Layout::kTsv, {t / f});
    ASSERT_TRUE(r.error) << f;
    EXPECT_EQ(r.error->kind(), ErrorKind::kInput) << f;
    EXPECT_TRUE(r.error->where().byte_offset.has_value()) << f;
    EXPECT_NE(r.error->describe().find(f), std::string::npos);
  }
}

TEST(PairReader, MissingFileAndDirectoryAreErrors) {
  test::TempDir t;
  auto r = read_all(Layout::kTsv, {t / "nope.tsv"});
  ASSERT_TRUE(r.error);
  EXPECT_NE(r.error->message().find("cannot open input"), std::string::npos);
  auto d = read_all(Layout::kTsv, {t.path()});
  ASSERT_TRUE(d.error);
  EXPECT_NE(d.error->message().find("is a directory"), std::string::npos);
}

TEST(PairReader, InputChecksumAndSizeDescribeTheWholeFile) {
  test::TempDir t;
  std::string gz = gzip_of(tsv_of(kPairs));
  test::write_file(t / "c.gz", gz);
  CorpusSpec spec;
  spec.files = {t / "c.gz"};
  auto reader = PairReader::open(spec, spec.files);
  ASSERT_TRUE(reader.ok());
  PairBatch b;
  while (true) {
    b.pairs.clear();
    auto more = (*reader)->next(b, 100, 1 << 20);
    ASSERT_TRUE(more.ok());
    if (!*more) break;
  }
  auto info = (*reader)->inputs();
  ASSERT_EQ(info.size(), 1u);
  EXPECT_EQ(info[0].bytes, gz.size());
  EXPECT_EQ(info[0].checksum, XXH3_64bits(gz.data(), gz.size()));
  EXPECT_EQ(info[0].compression, "gzip");
  EXPECT_EQ(info[0].lines, 4u);
}

}  // namespace
}  // namespace sheaf
