#include "stages/vocabulary.h"

#include <unistd.h>

#include <algorithm>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <nlohmann/json.hpp>

#include "core/text.h"
#include "io/output_file.h"
#include "core/stats.h"
#include "stages/script.h"
#include "stages/text_rules.h"
#include "subword/codec.h"

namespace sheaf {

const StageKind& vocabulary_kind() {
  static const StageKind k{
      "vocabulary",
      "learns a BPE vocabulary on the train split and measures a range of sizes on dev",
      StageRole::kStep,
      {
          {"size", FieldType::kInt, int64_t{8000}, "vocabulary size: 4 special + 256 byte + alphabet + merges", 261,
           4e9},
          {"shared",
           FieldType::kChoice,
           std::string("auto"),
           "one vocabulary for both sides, one per side, or auto (shared when the scripts match)",
           0,
           0,
           {"auto", "shared", "separate"}},
          {"min_count", FieldType::kInt, int64_t{2}, "stop merging when the best pair occurs fewer times", 1, 1e18},
          {"alphabet_coverage", FieldType::kNumber, 0.9999,
           "characters covering this fraction of occurrences get tokens; rarer ones use byte tokens", 0, 1},
          {"single_digits", FieldType::kBool, false, "every digit is a unit of its own (numbers never merge)"},
          {"unknown_as_bytes", FieldType::kBool, true,
           "encode characters outside the alphabet as byte tokens (off: the unknown token)"},
          {"pad", FieldType::kString, std::string("\u27e8pad\u27e9"), "spelling of the padding token"},
          {"unk", FieldType::kString, std::string("\u27e8unk\u27e9"), "spelling of the unknown token"},
          {"bos", FieldType::kString, std::string("\u27e8bos\u27e9"), "spelling of the begin-of-sequence token"},
          {"eos", FieldType::kString, std::string("\u27e8eos\u27e9"), "spelling of the end-of-sequence token"},
          {"special_ids", FieldType::kIntList, std::vector<int64_t>{0, 1, 2, 3},
           "ids of pad, unk, bos and eos: an order of 0, 1, 2, 3", 0, 3},
          {"sweep", FieldType::kIntList, std::vector<int64_t>{2000, 4000, 8000, 16000, 32000},
           "sizes measured on dev to help choose a size (learning runs up to the largest)", 261, 4e9},
          {"sweep_max_length", FieldType::kInt, int64_t{128},
           "the sweep reports the share of sentences longer than this", 1, 1e9},
          {"user_tokens", FieldType::kStringList, std::vector<std::string>{},
           "user-defined tokens (language or domain tags): the last ids, never split; part of size"},
          {"reuse", FieldType::kStringList, std::vector<std::string>{},
           "vocabulary files to use instead of learning: one shared, or a source and a target one"},
      },
      {"splits"},
      {"vocabulary"}};
  return k;
}

Result<VocabularyPlan> vocabulary_plan(const Pipeline& p, const StageSpec& spec) {
  const Params& q = spec.params;
  VocabularyPlan plan;
  const std::string& shared = q.text("shared");
  if (shared == "auto") {
    auto a = scripts_for_language(p.corpus.source_lang), b = scripts_for_language(p.corpus.target_lang);
    std::sort(a.begin(), a.end());
    std::sort(b.begin(), b.end());
    plan.shared = a == b;
  } else {
    plan.shared = shared == "shared";
  }
  for (const auto& f : q.list("reuse")) plan.reuse.push_back(p.resolve(f));
  plan.user_tokens = q.list("user_tokens");
  for (size_t i = 0; i < plan.user_tokens.size(); ++i) {
    const std::string& u = plan.user_tokens[i];
    if (u.empty() || std::find(plan.user_tokens.begin(), plan.user_tokens.begin() + static_cast<long>(i), u) !=
                         plan.user_tokens.begin() + static_cast<long>(i))
      return Error(ErrorKind::kPipeline,
                   "stage \"" + spec.name + "\": user_tokens must be non-empty and each given once (\"" + u + "\")",
                   q.where("user_tokens").empty() ? spec.where : q.where("user_tokens"));
  }
  if (plan.reuse.size() > 2)
    return Error(ErrorKind::kPipeline,
                 "stage \"" + spec.name + "\": reuse takes one shared vocabulary file, or a source and a target one",
                 q.where("reuse").empty() ? spec.where : q.where("reuse"));
  if (!plan.reuse.empty()) plan.shared = plan.reuse.size() == 1;
  plan.size = static_cast<size_t>(q.integer("size"));
  plan.sweep = q.integers("sweep");
  plan.sweep_max_length = q.integer("sweep_max_length");
  TrainOptions& t = plan.train;
  t.size = plan.size;
  for (int64_t s : plan.sweep) t.size = std::max(t.size, static_cast<size_t>(s));
  t.min_count = static_cast<uint64_t>(q.integer("min_count"));
  t.alphabet_coverage = q.number("alphabet_coverage");
  t.single_digits = q.flag("single_digits");
  t.unknown_as_bytes = q.flag("unknown_as_bytes");
  t.specials = {q.text("pad"), q.text("unk"), q.text("bos"), q.text("eos")};
  const auto& ids = q.integers("special_ids");
  std::array<bool, 4> seen{};
  bool ok = ids.size() == 4;
  for (size_t i = 0; ok && i < 4; ++i) {
    ok = !seen[static_cast<size_t>(ids[i])];
    seen[static_cast<size_t>(ids[i])] = true;
    t.special_ids[i] = static_cast<uint32_t>(ids[i]);
  }
  if (!ok)
    return Error(
        ErrorKind::kPipeline,
        "stage \"" + spec.name + "\": special_ids must give pad, unk, bos and eos the ids 0, 1, 2 and 3 in some order",
        q.where("special_ids").empty() ? spec.where : q.where("special_ids"));
  for (const auto& s : t.specials)
    if (s.empty())
      return Error(ErrorKind::kPipeline, "stage \"" + spec.name + "\": special token spellings must not be empty",
                   spec.where);
  return plan;
}

namespace {

using nlohmann::ordered_json;

// Reads one column of a split file.
std::vector<std::string> column(const std::string& path, int col) {
  std::vector<std::string> out;
  std::ifstream in(path, std::ios::binary);
  std::string line;
  while (std::getline(in, line)) {
    size_t tab = line.find('\t');
    out.push_back(col == 0 ? line.substr(0, tab) : (tab == std::string::npos ? "" : line.substr(tab + 1)));
  }
  return out;
}

std::vector<SweepRow> sweep_side(const Vocabulary& v, const std::vector<std::string>& dev,
                                 const std::vector<int64_t>& sizes, int64_t max_len) {
  std::vector<SweepRow> rows;
  uint64_t words = 0, bytes = 0;
  for (const auto& s : dev) {
    words += count_words(s);
    bytes += s.size();
  }
  for (int64_t size : sizes) {
    size_t fixed = v.first_merge();
    if (static_cast<size_t>(size) < fixed) continue;
    Encoder enc(v, static_cast<size_t>(size) - fixed, bytes);
    EncodeStats st;
    std::vector<uint64_t> per;
    std::vector<uint32_t> ids;
    uint64_t over = 0;
    for (const auto& s : dev) {
      ids.clear();
      enc.encode(s, ids, &st);
      per.push_back(ids.size());
      over += static_cast<int64_t>(ids.size()) > max_len;
    }
    SweepRow r;
    r.size = size;
    r.effective_size = enc.effective_size();
    r.tokens = distribution_of(per);
    r.token_total = st.tokens;
    r.tokens_per_word = words ? static_cast<double>(st.tokens) / static_cast<double>(words) : 0.0;
    r.over_max_length = r.tokens.count ? static_cast<double>(over) / static_cast<double>(r.tokens.count) : 0.0;
    r.byte_token_rate = st.tokens ? static_cast<double>(st.byte_tokens) / static_cast<double>(st.tokens) : 0.0;
    r.unknown_rate = st.tokens ? static_cast<double>(st.unknown) / static_cast<double>(st.tokens) : 0.0;
    rows.push_back(r);
  }
  return rows;
}

struct Job {
  std::string side;  // shared, source or target
  std::vector<int> columns;
};

// When a reused vocabulary file sits in the run directory that learned it,
// that run's figures for it at its own size (from its summary.json's sweep):
// tokens per word, byte-token and unknown rates on its dev split, to set
// beside the new run's. Left empty when there is no such run, or its
// summary.json cannot be read as one (a checked reader: nothing throws).
void old_run_figures(const std::string& vocab_path, const Vocabulary& v, ReusedVocabulary& out) {
  std::filesystem::path file(vocab_path);
  std::ifstream in(file.parent_path() / "summary.json");
  if (!in) return;
  std::stringstream text;
  text << in.rdbuf();
  auto j = ordered_json::parse(text.str(), nullptr, false);
  if (j.is_discarded() || !j.is_object() || !j.contains("vocabulary") || !j["vocabulary"].is_object() ||
      !j["vocabulary"].contains("vocabularies") || !j["vocabulary"]["vocabularies"].is_array())
    return;
  for (const auto& entry : j["vocabulary"]["vocabularies"]) {
    if (!entry.is_object() || !entry.contains("file") || !entry["file"].is_string() ||
        entry["file"].get<std::string>() != file.filename().string() || !entry.contains("sweep") ||
        !entry["sweep"].is_object())
      continue;
    out.has_old_run = true;
    out.old_summary = (file.parent_path() / "summary.json").string();
    for (const auto& [side, rows] : entry["sweep"].items()) {
      if (!rows.is_array()) continue;
      for (const auto& r : rows) {
        if (!r.is_object() || !r.contains("size") || !r["size"].is_number_unsigned() ||
            r["size"].get<uint64_t>() != v.size())
          continue;
        std::vector<std::pair<std::string, double>> figures;
        for (const char* key : {"tokens_per_word", "byte_token_rate", "unknown_rate"})
          if (r.contains(key) && r[key].is_number()) figures.emplace_back(key, r[key].get<double>());
        const std::string side_name(side);  // clang 14 cannot capture a structured binding
        auto at = std::find_if(out.old_figures.begin(), out.old_figures.end(),
                               [&side_name](const auto& f) { return f.first == side_name; });
        if (at != out.old_figures.end())
          at->second = std::move(figures);
        else
          out.old_figures.emplace_back(side, std::move(figures));
      }
    }
    return;
  }
}

// Reuse: each job's vocabulary comes from a file (checksum and every field
// checked by Vocabulary::load; its side must be the job's), is written into
// the run unchanged, and is measured on dev at its own size and the sweep
// sizes below it, so the summary says how well it covers the new text.
Status reuse_vocabularies(const StepContext& in, const StageSpec& spec, const VocabularyPlan& plan,
                          const std::vector<std::shared_ptr<const Vocabulary>>& loaded,
                          const std::vector<Job>& jobs, const std::string& dev_path, VocabularyReport& report,
                          LearnedVocabularies& out) {
  Location where = spec.params.where("reuse").empty() ? spec.where : spec.params.where("reuse");
  for (size_t i = 0; i < jobs.size(); ++i) {
    const Job& job = jobs[i];
    const std::string& path = plan.reuse[i];
    const std::shared_ptr<const Vocabulary>& v = loaded[i];
    if (v->info().side != job.side)
      return Error(ErrorKind::kPipeline,
                   "stage \"" + spec.name + "\": " + path + " is a " + v->info().side +
                       " vocabulary, but reuse needs " +
                       (jobs.size() == 1 ? std::string("a shared one (one file)")
                                         : "a source then a target one (two files), and this is the " + job.side +
                                               " file"),
                   where);
    std::string rel = "vocab." + job.side + ".txt";
    SHEAF_TRY(write_output(*in.dir, *in.record, {rel, "vocabulary", "", job.side, v->size()}, v->serialize()));
    out.files.push_back(rel);
    out.vocabularies.push_back(v);
    out.units.emplace_back();
    const Vocabulary* const vv = out.vocabularies.back().get();
    ReusedVocabulary reused{job.side, path, vv->checksum(), false, {}, {}};
    std::vector<int64_t> sizes;
    for (int64_t s : plan.sweep)
      if (static_cast<size_t>(s) < vv->size()) sizes.push_back(s);
    sizes.push_back(static_cast<int64_t>(vv->size()));
    VocabularyEntry e;
    e.side = job.side;
    e.file = rel;
    e.size = vv->size();
    e.alphabet = vv->alphabet_size();
    e.alphabet_coverage = vv->info().alphabet_coverage;
    e.merges = vv->merges();
    e.reused_from = path;
    for (int col : job.columns)
      e.sweep.emplace_back(col == 0 ? "source" : "target",
                           sweep_side(*vv, column(dev_path, col), sizes, plan.sweep_max_length));
    old_run_figures(path, *vv, reused);
    report.reused.push_back(std::move(reused));
    report.vocabularies.push_back(std::move(e));
  }
  report.size = report.vocabularies.empty() ? 0 : report.vocabularies[0].size;
  return {};
}

}  // namespace

namespace {

Result<LearnedVocabularies> run_vocabulary(const StepContext& in, const StageSpec& spec, int threads,
                                           const std::vector<std::shared_ptr<const Vocabulary>>& reused) {
  auto plan = vocabulary_plan(*in.pipeline, spec);
  if (!plan.ok()) return plan.error();
  RunRecord& rec = *in.record;
  uint64_t train_pairs = 0;
  bool have_dev = false;
  for (const auto& [name, n] : rec.splits) {
    if (name == "train") train_pairs = n;
    if (name == "dev") have_dev = n > 0;
  }
  if (train_pairs == 0)
    return Error(ErrorKind::kData,
                 "the train split is empty after filtering, so no vocabulary can be learned; see rejected.tsv and the "
                 "stage counts for what removed the pairs",
                 Location{in.dir->file("train.tsv"), 0, 0, {}});
  // The pipeline as resolved, so that the run directory alone gives the text
  // rules its vocabulary was learned after (stages/text_rules.h).
  SHEAF_TRY(write_output(*in.dir, rec, {kRunPipelineFile, "pipeline", "", "", 0}, render_pipeline(*in.pipeline)));
  std::string train = in.dir->file("train.tsv");
  std::string dev_path = in.dir->file(have_dev ? "dev.tsv" : "train.tsv");

  std::vector<Job> jobs;
  if (plan->shared) {
    jobs.push_back(Job{"shared", {0, 1}});
  } else {
    jobs.push_back(Job{"source", {0}});
    jobs.push_back(Job{"target", {1}});
  }
  VocabularyReport report;
  report.stage = spec.name;
  report.shared = plan->shared;
  report.size = plan->size;
  report.learned_up_to = plan->train.size;
  report.sweep_split = have_dev ? "dev" : "train";
  LearnedVocabularies out;
  if (!plan->reuse.empty()) {
    report.learned_up_to = 0;
    report.reuse = true;
    SHEAF_TRY(reuse_vocabularies(in, spec, *plan, reused, jobs, dev_path, report, out));
    rec.vocabulary = std::move(report);
    return out;
  }
  for (const auto& job : jobs) {
    TrainOptions t = plan->train;
    t.side = job.side;
    t.threads = threads;
    t.progress = ::isatty(STDERR_FILENO);
    TrainReport train_report;
    LearnedUnits units;
    auto learned = train_vocabulary({train}, job.columns, t, &train_report, &units);
    if (!learned.ok()) return learned.error();
    const Vocabulary& full = *learned;
    // The learner ran to the largest of size and the sweep sizes, so it
    // checked only that one against the alphabet: size itself must fit too
    // (else the file would be larger than asked for).
    if (plan->size < full.first_merge())
      return Error(ErrorKind::kData,
                   "vocabulary size " + std::to_string(plan->size) + " is too small for the " +
                       std::to_string(full.alphabet_size()) + " characters that cover " +
                       std::to_string(t.alphabet_coverage) + " of the " + job.side +
                       " training text (plus 4 special and 256 byte tokens); raise size to at least " +
                       std::to_string(full.first_merge()) + " or lower alphabet_coverage",
                   spec.where);
    // The vocabulary written: the first (size - fixed) merges.
    size_t fixed = full.first_merge() + plan->user_tokens.size();
    size_t keep = plan->size > fixed ? std::min(full.merges(), plan->size - fixed) : 0;
    std::vector<std::string> alphabet;
    for (size_t i = 0; i < full.alphabet_size(); ++i)
      alphabet.push_back(full.token(full.first_char() + static_cast<uint32_t>(i)).bytes);
    Vocabulary v = Vocabulary::build(t.specials, t.special_ids, alphabet, full.info());
    for (size_t m = 0; m < keep; ++m) {
      const Token& tk = full.token(full.first_merge() + static_cast<uint32_t>(m));
      v.add_merge(tk.left, tk.right);
    }
    for (const auto& u : plan->user_tokens) v.add_user(u);
    std::string rel = "vocab." + job.side + ".txt";
    SHEAF_TRY(write_output(*in.dir, rec, {rel, "vocabulary", "", job.side, v.size()}, v.serialize()));
    out.files.push_back(rel);
    if (keep < full.merges()) units = LearnedUnits{};  // encodings with merges the file does not have
    out.units.push_back(std::move(units));
    out.vocabularies.push_back(std::make_shared<const Vocabulary>(v));

    VocabularyEntry e;
    for (int col : job.columns) {
      auto dev = column(dev_path, col);
      std::vector<int64_t> sizes = plan->sweep;
      if (std::find(sizes.begin(), sizes.end(), static_cast<int64_t>(plan->size)) == sizes.end())
        sizes.push_back(static_cast<int64_t>(plan->size));
      std::sort(sizes.begin(), sizes.end());
      e.sweep.emplace_back(col == 0 ? "source" : "target", sweep_side(full, dev, sizes, plan->sweep_max_length));
    }
    e.side = job.side;
    e.file = rel;
    e.size = v.size();
    e.alphabet = v.alphabet_size();
    e.alphabet_coverage = v.info().alphabet_coverage;
    e.merges = v.merges();
    e.learned_merges = train_report.merges;
    // Early only if the file fell short of its size (the learner may stop
    // before a larger sweep size only).
    e.stopped_early = v.size() < plan->size;
    e.word_types = train_report.word_types;
    e.word_units = train_report.word_units;
    e.distinct_characters = train_report.distinct_characters;
    report.vocabularies.push_back(std::move(e));
  }
  rec.vocabulary = std::move(report);
  return out;
}

class VocabularyStep : public Step {
 public:
  explicit VocabularyStep(std::vector<std::shared_ptr<const Vocabulary>> reused) : reused_(std::move(reused)) {}
  Status run(StepContext& ctx) override {
    auto learned = run_vocabulary(ctx, *ctx.spec, ctx.threads, reused_);
    if (!learned.ok()) return learned.error();
    ctx.products->put(kVocabularyProduct, std::move(learned.value()));
    return {};
  }

 private:
  // Reused vocabularies, read when the step is built: before the run takes
  // its output directory, which may hold (and so remove) the very file.
  std::vector<std::shared_ptr<const Vocabulary>> reused_;
};

}  // namespace

Result<std::unique_ptr<Step>> make_vocabulary_step(const Pipeline& p, const StageSpec& spec) {
  auto plan = vocabulary_plan(p, spec);
  if (!plan.ok()) return plan.error();
  std::vector<std::shared_ptr<const Vocabulary>> reused;
  for (const auto& path : plan->reuse) {
    auto v = Vocabulary::load(path);
    if (!v.ok()) return v.error();
    reused.push_back(std::make_shared<const Vocabulary>(std::move(v.value())));
  }
  return std::unique_ptr<Step>(std::make_unique<VocabularyStep>(std::move(reused)));
}

}  // namespace sheaf
