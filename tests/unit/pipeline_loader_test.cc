// The pipeline file: every error names the file, line and column; defaults
// are filled in; overrides apply; the init template loads as written.
#include <gtest/gtest.h>

#include "pipeline/pipeline.h"
#include "stages/registry.h"
#include "test_util.h"

namespace sheaf {
namespace {

const char* kCorpus = "files = [\"c.tsv\"]\nsource_lang = \"en\"\ntarget_lang = \"es\"\n";

Error load_error(const std::string& text, const std::vector<Override>& o = {}) {
  auto r = load_pipeline_text(text, "p.toml", o);
  EXPECT_FALSE(r.ok()) << "loaded but should not have:\n" << text;
  return r.ok() ? Error(ErrorKind::kInternal, "") : r.error();
}

TEST(PipelineLoader, UnknownKeyIsNamedWithPositionAndSuggestion) {
  Error e = load_error(test::pipeline_text(kCorpus, "[[stage]]\nkind = \"length\"\nsoruce_max = 3\n"));
  EXPECT_EQ(e.kind(), ErrorKind::kPipeline);
  EXPECT_EQ(e.where().file, "p.toml");
  EXPECT_EQ(e.where().line, 11u);
  EXPECT_EQ(e.where().column, 1u);
  EXPECT_NE(e.message().find("unknown key \"soruce_max\""), std::string::npos) << e.message();
  EXPECT_NE(e.message().find("did you mean \"source_max\""), std::string::npos) << e.message();
  EXPECT_EQ(e.describe().rfind("p.toml:11:1: ", 0), 0u) << e.describe();
}

TEST(PipelineLoader, UnknownStageKindSuggestsClosest) {
  Error e = load_error(test::pipeline_text(kCorpus, "[[stage]]\nkind = \"dedupe\"\n"));
  EXPECT_EQ(e.where().line, 10u);
  EXPECT_EQ(e.where().column, 8u);
  EXPECT_NE(e.message().find("unknown stage kind \"dedupe\" (did you mean \"dedup\"?)"), std::string::npos)
      << e.message();
}

TEST(PipelineLoader, UnknownSectionKeyAndTopLevelKey) {
  Error e = load_error("sheaf = 1\n[corpus]\nfiles = [\"a\"]\nlayuot = \"tsv\"\n");
  EXPECT_EQ(e.where().line, 4u);
  EXPECT_NE(e.message().find("did you mean \"layout\""), std::string::npos);
  Error t = load_error("sheaf = 1\nstages = []\n");
  EXPECT_EQ(t.where().line, 2u);
  EXPECT_NE(t.message().find("did you mean \"stage\""), std::string::npos) << t.message();
}

TEST(PipelineLoader, WrongTypeHasLineAndColumn) {
  Error e = load_error(test::pipeline_text(kCorpus, "[[stage]]\nkind = \"length\"\nsource_max = \"long\"\n"));
  EXPECT_EQ(e.where().line, 11u);
  EXPECT_EQ(e.where().column, 14u);
  EXPECT_NE(e.message().find("source_max must be an integer"), std::string::npos) << e.message();
}

TEST(PipelineLoader, FractionOutOfRange) {
  Error e = load_error(test::pipeline_text(kCorpus, "[[stage]]\nkind = \"split\"\ndev = 1.3\n"));
  EXPECT_EQ(e.where().line, 11u);
  EXPECT_EQ(e.where().column, 7u);
  EXPECT_NE(e.message().find("dev is a fraction and must be at least 0 and below 1"), std::string::npos)
      << e.message();
}

TEST(PipelineLoader, NegativeLength) {
  Error e = load_error(test::pipeline_text(kCorpus, "[[stage]]\nkind = \"length\"\ntarget_min = -2\n"));
  EXPECT_EQ(e.where().line, 11u);
  EXPECT_NE(e.message().find("target_min must be from 0"), std::string::npos) << e.message();
}

TEST(PipelineLoader, BadChoiceListsTheChoices) {
  Error e = load_error(test::pipeline_text(kCorpus, "[[stage]]\nkind = \"normalize\"\nsource_form = \"nfkd\"\n"));
  EXPECT_NE(e.message().find("must be one of \"none\", \"nfc\", \"nfkc\""), std::string::npos) << e.message();
  EXPECT_NE(e.message().find("did you mean \"nfkc\""), std::string::npos) << e.message();
}

TEST(PipelineLoader, TomlSyntaxErrorHasPosition) {
  Error e = load_error("sheaf = 1\n[corpus\n");
  EXPECT_EQ(e.kind(), ErrorKind::kPipeline);
  EXPECT_EQ(e.where().line, 2u);
  EXPECT_GT(e.where().column, 0u);
  EXPECT_NE(e.message().find("not valid TOML"), std::string::npos);
}

TEST(PipelineLoader, MissingOrWrongFormatVersion) {
  EXPECT_NE(load_error("[corpus]\n").message().find("missing \"sheaf = 1\""), std::string::npos);
  Error e = load_error("sheaf = 7\n");
  EXPECT_EQ(e.where().line, 1u);
  EXPECT_EQ(e.where().column, 9u);
}

TEST(PipelineLoader, AlignedLayoutNeedsTwoFiles) {
  Error e = load_error("sheaf = 1\n[corpus]\nlayout = \"aligned\"\nfiles = [\"a\"]\n");
  EXPECT_EQ(e.where().line, 4u);
  EXPECT_NE(e.message().find("two line-aligned files"), std::string::npos);
}

TEST(PipelineLoader, StageOrderIsCheckedAtLoad) {
  Error e = load_error(test::pipeline_text(kCorpus, "[[stage]]\nkind = \"split\"\n[[stage]]\nkind = \"dedup\"\n"));
  EXPECT_EQ(e.where().line, 11u);
  EXPECT_NE(e.message().find("out of order"), std::string::npos) << e.message();
  Error two = load_error(test::pipeline_text(kCorpus, "[[stage]]\nkind = \"split\"\n[[stage]]\nkind = \"split\"\nname = \"s2\"\n"));
  EXPECT_NE(two.message().find("only one split stage"), std::string::npos) << two.message();
}

TEST(PipelineLoader, StageNamesAreUniqueAndDefaultToKind) {
  Error e = load_error(test::pipeline_text(kCorpus, "[[stage]]\nkind = \"dedup\"\n[[stage]]\nkind = \"dedup\"\n"));
  EXPECT_NE(e.message().find("two stages are named \"dedup\""), std::string::npos);
  auto ok = load_pipeline_text(
      test::pipeline_text(kCorpus, "[[stage]]\nkind = \"dedup\"\n[[stage]]\nkind = \"dedup\"\nname = \"dedup-source\"\nscope = \"source\"\n"),
      "p.toml");
  ASSERT_TRUE(ok.ok()) << ok.error().describe();
  EXPECT_EQ(ok->stages[0].name, "dedup");
  EXPECT_EQ(ok->stages[1].name, "dedup-source");
  EXPECT_EQ(ok->stages[1].params.text("scope"), "source");
  EXPECT_EQ(ok->stages[0].params.text("scope"), "pair");  // the default
}

TEST(PipelineLoader, DefaultsAreFilledAndPathsResolveAgainstTheFile) {
  auto p = load_pipeline_text(test::pipeline_text(kCorpus, "[[stage]]\nkind = \"length\"\n"), "conf/p.toml");
  ASSERT_TRUE(p.ok());
  EXPECT_EQ(p->stages[0].params.integer("source_max"), 200);
  EXPECT_DOUBLE_EQ(p->stages[0].params.number("max_ratio"), 3.0);
  EXPECT_EQ(p->resolve(p->corpus.files[0]), "conf/c.tsv");
  EXPECT_EQ(p->resolve("/abs/x"), "/abs/x");
  EXPECT_EQ(p->resolve("-"), "-");
}

TEST(PipelineLoader, OverridesApplyToNamedStages) {
  std::string text = test::pipeline_text(kCorpus, "[[stage]]\nkind = \"length\"\n");
  auto o = parse_override("length.source_max=12");
  ASSERT_TRUE(o.ok());
  auto p = load_pipeline_text(text, "p.toml", {*o});
  ASSERT_TRUE(p.ok());
  EXPECT_EQ(p->stages[0].params.integer("source_max"), 12);
  auto s = parse_override("corpus.source_lang=\"de\"");
  auto p2 = load_pipeline_text(text, "p.toml", {*s});
  ASSERT_TRUE(p2.ok());
  EXPECT_EQ(p2->corpus.source_lang, "de");
  Error bad = load_error(text, {*parse_override("lenght.source_max=1")});
  EXPECT_NE(bad.message().find("did you mean \"length\""), std::string::npos) << bad.message();
  Error type = load_error(text, {*parse_override("length.source_max=\"x\"")});
  EXPECT_EQ(type.where().file, "--set length.source_max");  // the value came from there, not from the file
  EXPECT_NE(type.message().find("source_max must be an integer"), std::string::npos);
  Error nottoml = load_error(text, {*parse_override("length.source_max=abc")});
  EXPECT_NE(nottoml.message().find("is not a TOML value"), std::string::npos);
  EXPECT_FALSE(parse_override("nodot=1").ok());
}

TEST(PipelineLoader, InitTemplateLoadsAndRendersStably) {
  InitOptions o;
  o.inputs = {"corpus.tsv"};
  o.source_lang = "en";
  o.target_lang = "de";
  o.vocab_size = 16000;
  o.seed = 99;
  o.near_dup = true;  // every stage kind
  std::string t = init_template(o);
  auto p = load_pipeline_text(t, "p.toml");
  ASSERT_TRUE(p.ok()) << p.error().describe();
  // Every built-in stage kind appears once, in registry order (kinds a
  // test registers are opt-in: init does not write them).
  std::vector<std::string> kinds;
  for (const StageKind* k : stage_kinds())
    if (!k->opt_in || k->kind == "near-dup") kinds.push_back(k->kind);
  ASSERT_EQ(p->stages.size(), kinds.size());
  for (size_t i = 0; i < p->stages.size(); ++i) EXPECT_EQ(p->stages[i].kind->kind, kinds[i]);
  int split = p->stage_index("split");
  ASSERT_GE(split, 0);
  EXPECT_EQ(p->stages[static_cast<size_t>(split)].params.integer("seed"), 99);
  // Resolving is a fixed point: render(load(render(x))) == render(x).
  std::string r1 = render_pipeline(*p);
  auto p2 = load_pipeline_text(r1, "p.toml");
  ASSERT_TRUE(p2.ok()) << p2.error().describe() << "\n" << r1;
  EXPECT_EQ(render_pipeline(*p2), r1);
}

TEST(PipelineLoader, TwoInputsMakeAnAlignedTemplate) {
  InitOptions o;
  o.inputs = {"a.en", "a.es"};
  o.source_lang = "en";
  o.target_lang = "es";
  auto p = load_pipeline_text(init_template(o), "p.toml");
  ASSERT_TRUE(p.ok());
  EXPECT_EQ(p->corpus.layout, Layout::kAligned);
  EXPECT_EQ(p->corpus.files.size(), 2u);
}

TEST(ClosestName, SuggestsOnlyPlausibleTypos) {
  EXPECT_EQ(closest_name("lenght", {"length", "dedup"}), "length");
  EXPECT_EQ(closest_name("zzzzzzzz", {"length", "dedup"}), "");
}

}  // namespace
}  // namespace sheaf
