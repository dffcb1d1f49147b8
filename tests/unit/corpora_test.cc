// Several named corpora in one run: a TSV file, a pair of aligned files and
// a JSON Lines file with known overlaps. Checks that per-corpus counts add
// up to the totals, that a pair in two corpora is kept once from the
// higher-priority corpus, that dev and test come only from the held-out
// corpora and share no source with train, that per-corpus stage keys and
// skips apply to their corpus only, and that the outputs are identical at 1,
// 2 and 8 threads.
#include <gtest/gtest.h>

#include <map>
#include <nlohmann/json.hpp>
#include <random>
#include <set>

#include "pipeline/pipeline.h"
#include "test_util.h"

namespace sheaf {
namespace {

using nlohmann::json;

// Invented sentences about a ferry timetable: distinct enough that only the
// planted overlaps are duplicates or near-duplicates.
std::pair<std::string, std::string> sentence(int i) {
  static const char* places[] = {"Ardmore", "Bellwick", "Carran", "Dunmere", "Elsby", "Fennick", "Gorran", "Hallow"};
  static const char* es_days[] = {"lunes", "martes", "miércoles", "jueves", "viernes", "sábado", "domingo"};
  static const char* en_days[] = {"Monday", "Tuesday", "Wednesday", "Thursday", "Friday", "Saturday", "Sunday"};
  std::mt19937 rng(static_cast<unsigned>(i) * 7919u + 13u);
  std::string code = "f" + std::to_string(i * 37 + 101);
  std::string en = "Ferry " + code + " leaves " + places[rng() % 8] + " for " + places[rng() % 8] + " every " +
                   en_days[rng() % 7] + " with " + std::to_string(10 + rng() % 90) + " seats and " +
                   std::to_string(i) + " bicycles";
  std::string es = "El ferry " + code + " sale de " + places[rng() % 8] + " hacia " + places[rng() % 8] +
                   " cada " + es_days[rng() % 7] + " con " + std::to_string(10 + rng() % 90) + " plazas y " +
                   std::to_string(i) + " bicicletas";
  return {en, es};
}

std::string jsonl_line(const std::string& en, const std::string& es) {
  return json({{"en", en}, {"es", es}}).dump() + "\n";
}

struct Corpora {
  test::TempDir dir;
  std::set<std::pair<std::string, std::string>> curated, crawl, indomain;
  Corpora() {
    // curated: pairs 0..79 (TSV).
    std::string tsv;
    for (int i = 0; i < 80; ++i) {
      auto p = sentence(i);
      tsv += p.first + "\t" + p.second + "\n";
      curated.insert(p);
    }
    // crawl: pairs 1000..1299 (aligned), plus curated pairs 0..9 again
    // (exact), 10..14 with other case and punctuation (near-duplicates), and
    // one very long pair (stricter lengths for this corpus).
    std::string en, es;
    auto add_crawl = [&](const std::string& a, const std::string& b) {
      en += a + "\n";
      es += b + "\n";
      crawl.insert({a, b});
    };
    for (int i = 1000; i < 1300; ++i) {
      auto p = sentence(i);
      add_crawl(p.first, p.second);
      if (i == 1100) {
        for (int k = 0; k < 10; ++k) add_crawl(sentence(k).first, sentence(k).second);
        for (int k = 10; k < 15; ++k) add_crawl("FERRY " + sentence(k).first.substr(6) + "!", sentence(k).second + ".");
      }
    }
    add_crawl("One two three four five six seven eight nine ten eleven twelve thirteen fourteen fifteen sixteen "
              "seventeen eighteen nineteen twenty twenty-one twenty-two twenty-three twenty-four",
              "Uno dos tres cuatro cinco seis siete ocho nueve diez once doce trece catorce quince dieciséis "
              "diecisiete dieciocho diecinueve veinte veintiuno veintidós veintitrés veinticuatro");
    // in-domain: pairs 2000..2059 (JSON Lines), plus crawl pairs 1000..1004
    // (exact duplicates of the crawl, which comes first) and one two-word
    // pair that the length stage would drop if this corpus did not skip it.
    std::string jl;
    for (int i = 2000; i < 2060; ++i) {
      auto p = sentence(i);
      jl += jsonl_line(p.first, p.second);
      indomain.insert(p);
      if (i == 2030)
        for (int k = 1000; k < 1005; ++k) jl += jsonl_line(sentence(k).first, sentence(k).second);
    }
    jl += jsonl_line("Harbour closed", "Puerto cerrado");
    indomain.insert({"Harbour closed", "Puerto cerrado"});
    test::write_file(dir / "curated.tsv", tsv);
    test::write_file(dir / "crawl.en", en);
    test::write_file(dir / "crawl.es", es);
    test::write_file(dir / "indomain.jsonl", jl);
    test::write_file(dir / "p.toml", R"(sheaf = 1

[[corpus]]
name = "curated"
files = ["curated.tsv"]
source_lang = "en"
target_lang = "es"
weight = 3.0

[[corpus]]
name = "crawl"
layout = "aligned"
files = ["crawl.en", "crawl.es"]
held_out = false
weight = 0.5
[corpus.stages.length]
source_max = 20
target_max = 20

[[corpus]]
name = "indomain"
layout = "jsonl"
files = ["indomain.jsonl"]
source_field = "en"
target_field = "es"
skip = ["length"]

[output]
dir = "out"

[[stage]]
kind = "normalize"

[[stage]]
kind = "length"
source_min = 3
target_min = 3

[[stage]]
kind = "dedup"

[[stage]]
kind = "near-dup"

[[stage]]
kind = "split"
dev = 0.1
test = 0.1
seed = 5
)");
  }
  test::Ran run(const std::string& out, int threads) {
    return test::run_sheaf("run " + (dir / "p.toml") + " --quiet --out " + out + " --threads " +
                           std::to_string(threads));
  }
};

std::vector<std::pair<std::string, std::string>> pairs_of(const std::string& path) {
  std::vector<std::pair<std::string, std::string>> out;
  for (const auto& line : test::lines_of(test::read_file(path))) {
    size_t tab = line.find('\t');
    out.emplace_back(line.substr(0, tab), line.substr(tab + 1));
  }
  return out;
}

TEST(Corpora, ThreeCorporaRunEndToEnd) {
  Corpora c;
  std::string out = c.dir / "out";
  auto r = c.run(out, 2);
  ASSERT_EQ(r.status, 0) << r.err;
  json m = json::parse(test::read_file(out + "/manifest.json"));
  ASSERT_EQ(m["corpora"].size(), 3u);
  EXPECT_EQ(m["layout"], "corpora");

  // Per-corpus counts add up to the totals, stage by stage and split by split.
  uint64_t read = 0, kept = 0, rejected = 0;
  std::map<std::string, uint64_t> splits, stage_out;
  for (const auto& cc : m["corpora"]) {
    read += cc["counts"]["read"].get<uint64_t>();
    kept += cc["counts"]["kept"].get<uint64_t>();
    rejected += cc["counts"]["rejected"].get<uint64_t>();
    EXPECT_EQ(cc["counts"]["read"].get<uint64_t>(),
              cc["counts"]["kept"].get<uint64_t>() + cc["counts"]["rejected"].get<uint64_t>());
    for (auto& [k, v] : cc["splits"].items()) splits[k] += v.get<uint64_t>();
    for (auto& [k, v] : cc["stages_out"].items()) stage_out[k] += v.get<uint64_t>();
  }
  EXPECT_EQ(read, m["counts"]["read"].get<uint64_t>());
  EXPECT_EQ(kept, m["counts"]["kept"].get<uint64_t>());
  EXPECT_EQ(rejected, m["counts"]["rejected"].get<uint64_t>());
  for (auto& [k, v] : m["splits"].items()) EXPECT_EQ(splits[k], v.get<uint64_t>()) << k;
  for (const auto& s : m["stages"]) EXPECT_EQ(stage_out[s["name"]], s["out"].get<uint64_t>()) << s["name"];
  EXPECT_EQ(read, 80u + 316u + 66u);
  EXPECT_EQ(m["corpora"][0]["name"], "curated");
  EXPECT_EQ(m["corpora"][0]["weight"].get<double>(), 3.0);
  EXPECT_EQ(m["corpora"][1]["held_out"], false);
  EXPECT_EQ(m["corpora"][2]["layout"], "jsonl");

  // Overlaps: kept once, from the corpus written first; the reason names it.
  std::string rej = test::read_file(out + "/rejected.tsv");
  for (int k = 0; k < 10; ++k)
    EXPECT_NE(rej.find("\tdedup\tduplicate:curated:" + std::to_string(k + 1) + "\t"), std::string::npos) << k;
  for (int k = 10; k < 15; ++k)
    EXPECT_NE(rej.find("\tnear-dup\tnear-duplicate:curated:" + std::to_string(k + 1) + "\t"), std::string::npos) << k;
  for (int k = 0; k < 5; ++k)
    EXPECT_NE(rej.find("indomain:" + std::to_string(32 + k) + "\tdedup\tduplicate:crawl:" + std::to_string(k + 1) + "\t"),
              std::string::npos)
        << k;
  // Per-corpus stage keys: the long crawl pair is too long for the crawl
  // (source_max = 20) though not for the stage as written (200); the
  // in-domain two-word pair skips the length stage that drops it elsewhere.
  EXPECT_NE(rej.find("crawl:316\tlength\ttoo-long:source"), std::string::npos);
  EXPECT_EQ(m["corpora"][2]["rejected"].count("length/too-short"), 0u);

  auto train = pairs_of(out + "/train.tsv"), dev = pairs_of(out + "/dev.tsv"), test_ = pairs_of(out + "/test.tsv");
  EXPECT_FALSE(dev.empty());
  EXPECT_FALSE(test_.empty());
  // Every output pair once.
  std::set<std::pair<std::string, std::string>> all;
  for (const auto* split : {&train, &dev, &test_})
    for (const auto& p : *split) EXPECT_TRUE(all.insert(p).second) << p.first;
  // Dev and test only from the held-out corpora (curated, indomain).
  for (const auto* split : {&dev, &test_})
    for (const auto& p : *split) EXPECT_TRUE(c.curated.count(p) || c.indomain.count(p)) << p.first;
  // No source of dev or test in train.
  std::set<std::string> held;
  for (const auto* split : {&dev, &test_})
    for (const auto& p : *split) held.insert(p.first);
  for (const auto& p : train) EXPECT_EQ(held.count(p.first), 0u) << p.first;
  for (const auto& o : m["split_overlap"]) EXPECT_EQ(o["shared_keys"], 0);
  EXPECT_TRUE(all.count({"Harbour closed", "Puerto cerrado"}));
}

TEST(Corpora, CrawlPairsSharingADevSourceAreDroppedNotLeaked) {
  Corpora c;
  // Add to the crawl a second translation of every curated source: each
  // curated pair that went to dev or test leaves its crawl twin nowhere to go.
  std::string en = test::read_file(c.dir / "crawl.en"), es = test::read_file(c.dir / "crawl.es");
  for (int k = 20; k < 80; ++k) {
    en += sentence(k).first + "\n";
    es += "Otra traducción del horario " + std::to_string(k) + " del ferry de la isla\n";
  }
  test::write_file(c.dir / "crawl.en", en);
  test::write_file(c.dir / "crawl.es", es);
  std::string out = c.dir / "out";
  auto r = c.run(out, 2);
  ASSERT_EQ(r.status, 0) << r.err;
  json m = json::parse(test::read_file(out + "/manifest.json"));
  auto dev = pairs_of(out + "/dev.tsv"), test_ = pairs_of(out + "/test.tsv"), train = pairs_of(out + "/train.tsv");
  size_t curated_held = 0;
  std::set<std::string> held;
  for (const auto* split : {&dev, &test_})
    for (const auto& p : *split) {
      held.insert(p.first);
      if (c.curated.count(p)) {
        int k = std::stoi(p.first.substr(7, p.first.find(' ', 7) - 7)) / 37 - 2;
        curated_held += k >= 20;
      }
    }
  for (const auto& p : train) EXPECT_EQ(held.count(p.first), 0u) << p.first;
  ASSERT_GT(curated_held, 0u);
  uint64_t dropped = m["corpora"][1]["rejected"].value("split/held-out-key", uint64_t{0});
  EXPECT_EQ(dropped, curated_held);
  std::string rej = test::read_file(out + "/rejected.tsv");
  EXPECT_NE(rej.find("\tsplit\theld-out-key:"), std::string::npos);
  // The counts still add up.
  uint64_t kept = 0;
  for (const auto& cc : m["corpora"]) kept += cc["counts"]["kept"].get<uint64_t>();
  EXPECT_EQ(kept, m["counts"]["kept"].get<uint64_t>());
  EXPECT_EQ(m["counts"]["kept"].get<uint64_t>(), train.size() + dev.size() + test_.size());
}

TEST(Corpora, OutputsAreIdenticalAt1And2And8Threads) {
  Corpora c;
  ASSERT_EQ(c.run(c.dir / "t1", 1).status, 0);
  ASSERT_EQ(c.run(c.dir / "t2", 2).status, 0);
  ASSERT_EQ(c.run(c.dir / "t8", 8).status, 0);
  for (const char* f : {"train.tsv", "dev.tsv", "test.tsv", "rejected.tsv", "manifest.json", "summary.json"}) {
    std::string a = test::read_file(c.dir / (std::string("t1/") + f));
    EXPECT_FALSE(a.empty()) << f;
    EXPECT_EQ(a, test::read_file(c.dir / (std::string("t2/") + f))) << f;
    EXPECT_EQ(a, test::read_file(c.dir / (std::string("t8/") + f))) << f;
  }
}

TEST(Corpora, LoaderChecksNamedCorpora) {
  auto load = [](const std::string& corpora) {
    return load_pipeline_text("sheaf = 1\n" + corpora + "\n[[stage]]\nkind = \"length\"\n[[stage]]\nkind = \"dedup\"\n",
                              "p.toml");
  };
  auto ok = load("[[corpus]]\nname = \"a\"\nfiles = [\"a.tsv\"]\nsource_lang = \"en\"\ntarget_lang = \"es\"\n"
                 "skip = [\"length\"]\n[[corpus]]\nname = \"b\"\nfiles = [\"b.tsv\"]\n[corpus.stages.length]\n"
                 "source_max = 9\n");
  ASSERT_TRUE(ok.ok()) << ok.error().describe();
  EXPECT_EQ(ok->corpora.size(), 2u);
  EXPECT_EQ(ok->corpora[1].target_lang, "es");  // from the first corpus
  EXPECT_EQ(ok->origin(1, 7), "b:7");
  EXPECT_EQ(ok->corpora[0].skip, std::vector<std::string>{"length"});
  ASSERT_EQ(ok->corpora[1].stage_params.size(), 1u);
  EXPECT_EQ(ok->corpora[1].stage_params[0].second.integer("source_max"), 9);
  EXPECT_EQ(ok->corpora[1].stage_params[0].second.integer("target_max"), 200);  // the stage's own
  // Rendering is a fixed point.
  std::string r = render_pipeline(*ok);
  auto again = load_pipeline_text(r, "p.toml");
  ASSERT_TRUE(again.ok()) << again.error().describe() << "\n" << r;
  EXPECT_EQ(render_pipeline(*again), r);

  auto bad = [&](const std::string& text, const std::string& words) {
    auto p = load(text);
    ASSERT_FALSE(p.ok()) << text;
    EXPECT_NE(p.error().describe().find(words), std::string::npos) << p.error().describe();
  };
  bad("[[corpus]]\nfiles = [\"a.tsv\"]\n", "needs name");
  bad("[[corpus]]\nname = \"a\"\nfiles = [\"a.tsv\"]\n[[corpus]]\nname = \"a\"\nfiles = [\"b.tsv\"]\n", "two corpora");
  bad("[[corpus]]\nname = \"a\"\nfiles = [\"a.tsv\"]\nsource_lang = \"en\"\n[[corpus]]\nname = \"b\"\nfiles = "
      "[\"b.tsv\"]\nsource_lang = \"de\"\n",
      "one language pair");
  bad("[[corpus]]\nname = \"a\"\nfiles = [\"a.tsv\"]\nheld_out = false\n", "held_out");
  bad("[[corpus]]\nname = \"a\"\nfiles = [\"a.tsv\"]\nskip = [\"lenght\"]\n", "did you mean \"length\"");
  bad("[[corpus]]\nname = \"a\"\nfiles = [\"a.tsv\"]\nskip = [\"dedup\"]\n", "only filter stages");
  bad("[[corpus]]\nname = \"a\"\nfiles = [\"a.tsv\"]\n[corpus.stages.length]\nsource_mx = 3\n", "source_mx");
  bad("[[corpus]]\nname = \"length\"\nfiles = [\"a.tsv\"]\n", "name of a stage");
  bad("[[corpus]]\nname = \"a\"\nfiles = [\"-\"]\n[[corpus]]\nname = \"b\"\nfiles = [\"-\"]\n", "standard input");
  // --set reaches every corpus, or one by name.
  auto set = load_pipeline_text(
      "sheaf = 1\n[[corpus]]\nname = \"a\"\nfiles = [\"a.tsv\"]\n[[corpus]]\nname = \"b\"\nfiles = [\"b.tsv\"]\n",
      "p.toml", {{"corpus", "source_lang", "\"fr\""}, {"b", "weight", "2.5"}});
  ASSERT_TRUE(set.ok()) << set.error().describe();
  EXPECT_EQ(set->corpora[1].source_lang, "fr");
  EXPECT_EQ(set->corpora[1].weight, 2.5);
  EXPECT_EQ(set->corpora[0].weight, 1.0);
}

TEST(Corpora, InputOnTheCommandLineNeedsASingleCorpus) {
  Corpora c;
  auto r = test::run_sheaf("run " + (c.dir / "p.toml") + " --quiet --input " + (c.dir / "curated.tsv"));
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("--set NAME.files"), std::string::npos) << r.err;
}

TEST(Corpora, InitWritesSeveralCorporaThatLoad) {
  InitOptions o;
  o.corpora = {"curated=cur.tsv", "crawl=c.en,c.es", "web=w.jsonl"};
  o.source_lang = "en";
  o.target_lang = "es";
  ASSERT_TRUE(check_init_options(o).ok());
  auto p = load_pipeline_text(init_template(o), "p.toml");
  ASSERT_TRUE(p.ok()) << p.error().describe();
  ASSERT_EQ(p->corpora.size(), 3u);
  EXPECT_EQ(p->corpora[1].layout, Layout::kAligned);
  EXPECT_EQ(p->corpora[2].layout, Layout::kJsonl);
  EXPECT_EQ(p->corpora[2].name, "web");
  InitOptions both = o;
  both.inputs = {"x.tsv"};
  EXPECT_FALSE(check_init_options(both).ok());
  InitOptions bad = o;
  bad.corpora = {"nofile"};
  EXPECT_FALSE(check_init_options(bad).ok());
}

}  // namespace
}  // namespace sheaf
