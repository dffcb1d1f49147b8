// The split-overlap check (train read back once at the end of pass 1, the
// other splits' keys held as they are written). The split stage never puts
// one key in two splits, so
// a real run always reports 0 (Split.DemoRunReportsZeroOverlap); here a
// router that does is planted to show the check counts what it claims:
// for each pair of splits, the pairs of the first whose key the second has.
#include <gtest/gtest.h>

#include "pipeline/pass1_writer.h"
#include "test_util.h"

namespace sheaf {
namespace {

class LeakyRouter : public SplitRouter {
 public:
  const std::vector<std::string>& names() const override { return names_; }
  bool deferred() const override { return false; }
  int assign(uint64_t, uint32_t) const override { return 0; }
  std::string key_text(const Pair& p) const override { return std::string(p.text[0]); }

 private:
  std::vector<std::string> names_{"train", "dev", "test"};
};

TEST(Pass1Overlap, CountsTrainPairsWhoseKeyAnotherSplitHolds) {
  test::TempDir tmp;
  auto lock = RunDir::lock(tmp / "run");
  ASSERT_TRUE(lock.ok());
  auto dir = RunDir::prepare(tmp / "run", true, std::move(lock.value()));
  ASSERT_TRUE(dir.ok());
  Pipeline pipeline;
  pipeline.corpora.resize(1);
  RunRecord rec;
  rec.stages = {{"read", "read", 0, 0, {}, {}, {}}, {"split", "split", 0, 0, {}, {}, {}}, {"output", "output", 0, 0, {}, {}, {}}};
  LeakyRouter router;
  Pass1Writer writer(dir.value(), rec, router.names(), &router, pipeline);
  ASSERT_TRUE(writer.open().ok());

  // (source, split): "hello" twice in train and once in dev and in test;
  // "world" in dev and in test; "only" in train.
  const std::vector<std::pair<std::string, int>> pairs = {
      {"hello", 0}, {"hello", 1}, {"world", 1}, {"only", 0}, {"hello", 0}, {"world", 2}, {"hello", 2}};
  PairBatch batch;
  uint64_t line = 0;
  for (const auto& [text, split] : pairs) {
    Pair p;
    p.line = ++line;
    p.text = {text, "x"};
    p.raw = text;
    p.chars = {static_cast<uint32_t>(text.size()), 1};
    p.words = {1, 1};
    p.split = split;
    batch.pairs.push_back(p);
  }
  writer.take(batch);
  ASSERT_TRUE(writer.finish(2).ok());
  ASSERT_EQ(rec.overlaps.size(), 3u);
  EXPECT_EQ(rec.overlaps[0].a, "train");
  EXPECT_EQ(rec.overlaps[0].b, "dev");
  EXPECT_EQ(rec.overlaps[0].keys, 2u);  // the two train pairs "hello"
  EXPECT_EQ(rec.overlaps[1].b, "test");
  EXPECT_EQ(rec.overlaps[1].keys, 2u);  // the same two
  EXPECT_EQ(rec.overlaps[2].a, "dev");
  EXPECT_EQ(rec.overlaps[2].b, "test");
  EXPECT_EQ(rec.overlaps[2].keys, 2u);  // "hello" and "world"
  EXPECT_EQ(test::read_file(tmp / "run/train.tsv"), "hello\tx\nonly\tx\nhello\tx\n");
  EXPECT_TRUE(writer.close().ok());
}

}  // namespace
}  // namespace sheaf
