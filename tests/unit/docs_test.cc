// The documentation says what the code does: every key of every section and
// stage appears in docs/pipeline.md with its default, and every example
// pipeline loads.
#include <gtest/gtest.h>

#include <filesystem>

#include "pipeline/pipeline.h"
#include "test_util.h"

namespace sheaf {
namespace {

// The rows of the table under "### NAME" in docs/pipeline.md.
std::string section(const std::string& doc, const std::string& heading) {
  size_t at = doc.find("\n### " + heading + "\n");
  if (at == std::string::npos) return {};
  size_t end = doc.find("\n### ", at + 5);
  return doc.substr(at, end == std::string::npos ? std::string::npos : end - at);
}

TEST(Docs, EveryKeyIsDocumentedWithItsDefault) {
  std::string doc = test::read_file(test::source_dir() + "/docs/pipeline.md");
  ASSERT_FALSE(doc.empty());
  // init renders every key with its default: "key = value  # help".
  InitOptions o;
  o.inputs = {"corpus.tsv"};
  o.source_lang = "en";
  o.target_lang = "es";
  o.near_dup = true;
  std::string current = "[corpus]";
  for (const auto& line : test::lines_of(init_template(o))) {
    if (line.rfind("kind = \"", 0) == 0) current = line.substr(8, line.size() - 9);
    if (line == "[corpus]" || line == "[output]") current = line;
    size_t eq = line.find(" = ");
    if (eq == std::string::npos || line[0] == '#' || line[0] == ' ' || line.rfind("kind", 0) == 0 || line.rfind("sheaf", 0) == 0) continue;
    std::string key = line.substr(0, eq);
    std::string value = line.substr(eq + 3);
    value = value.substr(0, value.find(" # "));
    while (!value.empty() && value.back() == ' ') value.pop_back();
    if (key == "files" || key == "source_lang" || key == "target_lang" || key == "dir" ||
        key == "seed" || key == "size")
      value = "";  // values that init fills from its options, or multi-line
    std::string sec = section(doc, current);
    ASSERT_FALSE(sec.empty()) << "no section for " << current;
    if (key == "rules") value = "[";  // the default rules are listed in prose
    std::string row = "| `" + key + "` | `" + value;
    EXPECT_NE(sec.find(row), std::string::npos) << current << ": " << row;
  }
}

TEST(Docs, ExamplePipelinesLoad) {
  size_t n = 0;
  for (const auto& e : std::filesystem::directory_iterator(test::source_dir() + "/pipelines")) {
    if (e.path().extension() != ".toml") continue;
    auto p = load_pipeline(e.path().string());
    EXPECT_TRUE(p.ok()) << e.path() << ": " << (p.ok() ? "" : p.error().describe());
    ++n;
  }
  EXPECT_GE(n, 4u);
}

}  // namespace
}  // namespace sheaf
