// Extending sheaf: a toy streaming stage and two toy steps, registered by
// the test alone, loaded from a pipeline file, ordered by what they declare
// and run by the ordinary runner (DEVELOPERS.md, "Adding a streaming stage"
// and "Adding a step", follows the same steps).
#include <gtest/gtest.h>

#include <string>

#include "pipeline/pipeline.h"
#include "pipeline/runner.h"
#include "run/step.h"
#include "stages/registry.h"
#include "stages/stage.h"
#include "test_util.h"

namespace sheaf::test {
namespace {

// A filter: drops pairs whose source holds the key's word, and upper-cases
// ASCII letters of the target.
class ShoutStage : public Stage {
 public:
  ShoutStage(int index, std::string word) : index_(index), word_(std::move(word)) {}
  void map(PairBatch& b) override {
    for (Pair& p : b.pairs) {
      if (!p.kept()) continue;
      if (p.text[0].find(word_) != std::string_view::npos) {
        b.drop(p, index_, "banned-word:" + word_);
        continue;
      }
      std::string t(p.text[1]);
      if (!rewrite(t, 1)) continue;
      if (t != p.text[1]) p.text[1] = b.arena.copy(t);
    }
  }
  bool rewrite(std::string& text, int side) const override {
    if (side == 1)
      for (char& c : text)
        if (c >= 'a' && c <= 'z') c = static_cast<char>(c - 'a' + 'A');
    return true;
  }

 private:
  int index_;
  std::string word_;
};

// A step: counts train's lines, writes toy-count.txt, hands the count on.
class CountStep : public Step {
 public:
  Status run(StepContext& ctx) override {
    std::string train = read_file(ctx.dir->file("train.tsv"));
    uint64_t n = 0;
    for (char c : train) n += c == '\n';
    ctx.products->put("toy-count", n);
    return write_output(*ctx.dir, *ctx.record, {"toy-count.txt", "toy", "", "", 1}, std::to_string(n) + "\n");
  }
};

// A step that needs the count (in memory, not from the file).
class EchoStep : public Step {
 public:
  Status run(StepContext& ctx) override {
    const uint64_t* n = ctx.products->get<uint64_t>("toy-count");
    if (n == nullptr) return Error(ErrorKind::kInternal, "no toy-count");
    return write_output(*ctx.dir, *ctx.record, {"toy-echo.txt", "toy", "", "", 1},
                        "train holds " + std::to_string(*n) + " pairs\n");
  }
};

void register_toys() {
  static bool done = false;
  if (done) return;
  done = true;
  StageKind shout{"toy-shout", "test filter", StageRole::kFilter,
                  {{"word", FieldType::kString, std::string("forbidden"), "drop pairs whose source holds it"}}};
  shout.opt_in = true;
  ASSERT_TRUE(register_stage_kind(shout,
                                  [](const StageContext& ctx) -> Result<std::unique_ptr<Stage>> {
                                    return std::unique_ptr<Stage>(std::make_unique<ShoutStage>(
                                        ctx.index, ctx.spec->params.text("word")));
                                  },
                                  nullptr)
                  .ok());
  StageKind count{"toy-count", "test step", StageRole::kStep, {}, {"splits"}, {"toy-count"}};
  count.opt_in = true;
  ASSERT_TRUE(register_stage_kind(count, nullptr,
                                  [](const Pipeline&, const StageSpec&) -> Result<std::unique_ptr<Step>> {
                                    return std::unique_ptr<Step>(std::make_unique<CountStep>());
                                  })
                  .ok());
  StageKind echo{"toy-echo", "test step", StageRole::kStep, {}, {"toy-count"}, {}};
  echo.opt_in = true;
  ASSERT_TRUE(register_stage_kind(echo, nullptr,
                                  [](const Pipeline&, const StageSpec&) -> Result<std::unique_ptr<Step>> {
                                    return std::unique_ptr<Step>(std::make_unique<EchoStep>());
                                  })
                  .ok());
}

TEST(Extension, ToyStageAndStepsRunThroughTheOrdinaryRunner) {
  register_toys();
  TempDir t;
  write_file(t / "c.tsv",
             "the forbidden garden\tel jardín prohibido\n"
             "a quiet harbour\tun puerto tranquilo\n"
             "two boats\tdos barcos\n");
  std::string text = pipeline_text("files = [\"c.tsv\"]\nsource_lang = \"en\"\ntarget_lang = \"es\"",
                                   "[[stage]]\nkind = \"toy-shout\"\n"
                                   "[[stage]]\nkind = \"toy-count\"\n"
                                   "[[stage]]\nkind = \"toy-echo\"\n");
  write_file(t / "p.toml", text);
  auto p = load_pipeline(t / "p.toml");
  ASSERT_TRUE(p.ok()) << p.error().describe();
  ASSERT_TRUE(check_stages(*p).ok());
  RunOptions o;
  o.out_dir = t / "run";
  o.threads = 2;
  auto rec = run_pipeline(*p, o);
  ASSERT_TRUE(rec.ok()) << rec.error().describe();
  // The filter ran in pass 1: one pair dropped with its reason, the target
  // rewritten.
  EXPECT_EQ(read_file(t / "run/train.tsv"), "a quiet harbour\tUN PUERTO TRANQUILO\ntwo boats\tDOS BARCOS\n");
  EXPECT_NE(read_file(t / "run/rejected.tsv").find("toy-shout\tbanned-word:forbidden"), std::string::npos);
  // The steps ran in order, the second from the first's value in memory.
  EXPECT_EQ(read_file(t / "run/toy-count.txt"), "2\n");
  EXPECT_EQ(read_file(t / "run/toy-echo.txt"), "train holds 2 pairs\n");
  // And the record lists their files.
  int listed = 0;
  for (const auto& out : rec->outputs) listed += out.kind == "toy";
  EXPECT_EQ(listed, 2);
}

TEST(Extension, TheLoaderOrdersStepsByWhatTheyNeed) {
  register_toys();
  const std::string corpus = "files = [\"c.tsv\"]\nsource_lang = \"en\"\ntarget_lang = \"es\"";
  // The echo needs the count: before it, the file is refused, pointing at
  // the echo and naming the kind that provides what it needs.
  auto p = load_pipeline_text(
      pipeline_text(corpus, "[[stage]]\nkind = \"toy-echo\"\n[[stage]]\nkind = \"toy-count\"\n"), "p.toml");
  ASSERT_FALSE(p.ok());
  EXPECT_NE(p.error().message().find("needs the toy-count, which a toy-count stage before it provides"),
            std::string::npos)
      << p.error().message();
  EXPECT_EQ(p.error().where().line, 8u);  // the echo's [[stage]]
  // Provided twice: refused.
  auto twice = load_pipeline_text(pipeline_text(corpus, "[[stage]]\nkind = \"toy-count\"\n[[stage]]\nkind = "
                                                        "\"toy-count\"\nname = \"again\"\n"),
                                  "p.toml");
  ASSERT_FALSE(twice.ok());
  EXPECT_NE(twice.error().message().find("already provides the toy-count"), std::string::npos)
      << twice.error().message();
  // A filter after a step: out of order.
  auto late = load_pipeline_text(
      pipeline_text(corpus, "[[stage]]\nkind = \"toy-count\"\n[[stage]]\nkind = \"toy-shout\"\n"), "p.toml");
  ASSERT_FALSE(late.ok());
  EXPECT_NE(late.error().message().find("out of order"), std::string::npos) << late.error().message();
  // The built-in shards step needs the vocabulary.
  auto shards = load_pipeline_text(pipeline_text(corpus, "[[stage]]\nkind = \"shards\"\n"), "p.toml");
  ASSERT_FALSE(shards.ok());
  EXPECT_NE(shards.error().message().find("needs the vocabulary, which a vocabulary stage before it provides"),
            std::string::npos)
      << shards.error().message();
  // A kind cannot be registered twice.
  EXPECT_FALSE(register_stage_kind(*find_stage_kind("toy-count"), nullptr,
                                   [](const Pipeline&, const StageSpec&) -> Result<std::unique_ptr<Step>> {
                                     return std::unique_ptr<Step>(std::make_unique<CountStep>());
                                   })
                   .ok());
}

}  // namespace
}  // namespace sheaf::test
