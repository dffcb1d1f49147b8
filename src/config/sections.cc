// The [corpus] and [output] sections of a pipeline file.
#include "config/pipeline.h"

namespace sheaf {

const FieldList& corpus_fields() {
  static const FieldList f = {
      {"layout", FieldType::kChoice, std::string("tsv"),
       "\"tsv\": one file of source<TAB>target lines; \"aligned\": two line-aligned files; \"jsonl\": JSON Lines",
       0, 0, {"tsv", "aligned", "jsonl"}},
      {"files", FieldType::kStringList, std::vector<std::string>{},
       "input file(s), plain, gzip, zstd, bzip2 or xz (detected from content); \"-\" reads standard input"},
      {"source_lang", FieldType::kString, std::string(""), "ISO 639-1 code of the source side (e.g. \"en\")"},
      {"target_lang", FieldType::kString, std::string(""), "ISO 639-1 code of the target side (e.g. \"es\")"},
      {"source_field", FieldType::kString, std::string("source"), "jsonl: name of the field holding the source text"},
      {"target_field", FieldType::kString, std::string("target"), "jsonl: name of the field holding the target text"},
      {"max_line_bytes", FieldType::kInt, int64_t{1 << 20},
       "a longer input line is dropped (reason line-too-long), its bytes streamed to rejected-long.tsv, never held in memory", 16, 1LL << 30},
  };
  return f;
}

const FieldList& named_corpus_fields() {
  static const FieldList f = [] {
    FieldList l = {{"name", FieldType::kString, std::string(""),
                    "the corpus's name (letters, digits, '-', '_'), used in reasons, rejected.tsv and the record"}};
    for (const auto& c : corpus_fields()) l.push_back(c);
    l.push_back({"held_out", FieldType::kBool, true, "dev, test and further splits may take pairs from this corpus"});
    l.push_back({"weight", FieldType::kNumber, 1.0, "sampling weight, recorded for the training loader", 0, 1e6});
    l.push_back({"skip", FieldType::kStringList, std::vector<std::string>{},
                 "filter stages (by name) this corpus's pairs pass untouched"});
    return l;
  }();
  return f;
}

const FieldList& output_fields() {
  static const FieldList f = {
      {"dir", FieldType::kString, std::string("sheaf-run"),
       "output directory (relative to this file); --out on the command line overrides it"},
  };
  return f;
}

}  // namespace sheaf
