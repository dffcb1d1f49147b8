#include "report/summary.h"

#include <nlohmann/json.hpp>
#include <oneapi/tbb/enumerable_thread_specific.h>
#include <oneapi/tbb/parallel_pipeline.h>
#include <oneapi/tbb/task_arena.h>
#include <unicode/utf8.h>

#include <cstdio>
#include <fstream>
#include <sstream>

#include "core/text.h"
#include "core/utf8.h"
#include "core/batch_pool.h"
#include "core/tsan.h"
#include "io/output_file.h"
#include "report/figures.h"
#include "report/html_report.h"
#include "core/stats.h"
#include "stages/vocabulary.h"
#include "subword/vocabulary.h"

namespace sheaf {

namespace {

using nlohmann::ordered_json;

// Fixed bins of the histograms in summary.json: (width, number of bins; the
// last bin also holds everything above).
constexpr uint64_t kCharBin = 10, kWordBin = 2, kTokenBin = 4, kRatioBin = 10;
constexpr size_t kBins = 50;

// Alphabet coverage of a split's characters.
struct SideStats {
  uint64_t covered = 0, letters = 0;  // character occurrences in the alphabet, all
};
struct SplitStats {
  SideStats side[2];
  void merge(const SplitStats& o) {
    for (int s = 0; s < 2; ++s) {
      side[s].covered += o.side[s].covered;
      side[s].letters += o.side[s].letters;
    }
  }
};

void count_coverage(std::string_view s, const Vocabulary* v, SideStats& st) {
  if (v == nullptr) return;
  for_each_char(s, [&](UChar32, std::string_view bytes) {
    ++st.letters;
    st.covered += v->char_id(bytes) >= 0;
  });
}

Result<SplitStats> scan(const std::string& path, const Vocabulary* vocab[2], int threads) {
  std::ifstream in(path, std::ios::binary);
  if (!in) return Error(ErrorKind::kIo, "cannot read split text", Location{path, 0, 0, {}});
  tbb::enumerable_thread_specific<SplitStats> local;
  BatchPool<std::vector<std::string>> pool(static_cast<size_t>(threads) * 4);
  tbb::task_arena arena(threads);
  arena.execute([&] {
    pool.run_pipeline(
        tbb::make_filter<void, std::vector<std::string>*>(tbb::filter_mode::serial_in_order,
                                                          [&](tbb::flow_control& fc) -> std::vector<std::string>* {
                                                            TaskBody body;
                                                            SerialTurn turn(&in);
                                                            std::vector<std::string>* b = pool.acquire();
                                                            b->clear();
                                                            std::string line;
                                                            while (b->size() < 4096 && std::getline(in, line))
                                                              b->push_back(std::move(line));
                                                            if (b->empty()) {
                                                              pool.release(b);
                                                              fc.stop();
                                                              return nullptr;
                                                            }
                                                            handoff_release(b);
                                                            return b;
                                                          }) &
            tbb::make_filter<std::vector<std::string>*, void>(tbb::filter_mode::parallel, [&](std::vector<std::string>* b) {
              TaskBody body;
              handoff_acquire(b);
              SplitStats& st = local.local();
              for (const auto& line : *b) {
                size_t tab = line.find('\t');
                std::string_view side[2] = {std::string_view(line).substr(0, tab),
                                            tab == std::string::npos ? std::string_view{} : std::string_view(line).substr(tab + 1)};
                for (int s = 0; s < 2; ++s) count_coverage(side[s], vocab[s], st.side[s]);
              }
              pool.release(b);
            }));
  });
  SplitStats total;
  for (const auto& l : local) total.merge(l);
  return total;
}

HistFigures hist_figures(const Histogram& h, uint64_t width, double scale = 1.0) {
  HistFigures f;
  f.dist = h.summary();
  f.scale = scale;
  f.mean = f.dist.mean / scale;
  f.bin_width = static_cast<double>(width) / scale;
  f.bins = h.bins(width, kBins);
  return f;
}

ordered_json hist_json(const HistFigures& h) {
  const Distribution& d = h.dist;
  ordered_json j;
  if (h.scale == 1.0) {
    j = {{"count", d.count}, {"sum", d.sum}, {"mean", h.mean}, {"min", d.min}, {"p50", d.p50},
         {"p90", d.p90},     {"p95", d.p95}, {"p99", d.p99},   {"max", d.max}};
  } else {
    auto shown = [&](uint64_t v) { return static_cast<double>(v) / h.scale; };
    j = {{"count", d.count}, {"mean", h.mean},       {"min", shown(d.min)}, {"p50", shown(d.p50)},
         {"p90", shown(d.p90)}, {"p95", shown(d.p95)}, {"p99", shown(d.p99)}, {"max", shown(d.max)}};
  }
  ordered_json bins = ordered_json::array();
  for (uint64_t c : h.bins) bins.push_back(c);
  j["bin_width"] = h.bin_width;
  j["bins"] = bins;
  return j;
}

}  // namespace

nlohmann::ordered_json summary_json(const SummaryFigures& f) {
  const RunRecord& rec = *f.record;
  ordered_json j;
  j["format"] = "sheaf-summary";
  j["format_version"] = kSummaryFormat;
  j["counts"] = {{"read", rec.read}, {"kept", rec.kept}, {"rejected", rec.rejected}};
  if (!rec.corpora.empty()) j["corpora"] = corpora_json(rec);
  ordered_json funnel = ordered_json::array();
  for (const auto& s : rec.stages) funnel.push_back(stage_count_json(s, true));
  j["funnel"] = funnel;

  ordered_json splits = ordered_json::object();
  for (const SplitFigures& sp : f.splits) {
    ordered_json sj = {{"pairs", sp.pairs}};
    for (int s = 0; s < 2; ++s) {
      const SideFigures& x = sp.side[s];
      ordered_json side_j = {{"chars", hist_json(x.chars)}, {"words", hist_json(x.words)}};
      if (x.tokens) {
        ordered_json tj = hist_json(x.tokens->lengths);
        tj["byte_token_rate"] = x.tokens->byte_token_rate;
        tj["unknown_tokens"] = x.tokens->unknown;
        tj["tokens_per_word"] = x.tokens->tokens_per_word;
        side_j["tokens"] = tj;
      }
      sj[s ? "target" : "source"] = side_j;
    }
    sj["length_ratio"] = hist_json(sp.ratio);
    splits[sp.name] = sj;
  }
  j["splits"] = splits;
  ordered_json ov = ordered_json::array();
  for (const auto& o : rec.overlaps) ov.push_back({{"split", o.a}, {"other", o.b}, {"shared_keys", o.keys}});
  j["split_overlap"] = ov;
  if (rec.vocabulary) {
    ordered_json v = vocabulary_json(*rec.vocabulary);
    ordered_json coverage = ordered_json::object();
    for (const auto& [split, sides] : f.coverage)
      for (const auto& [side, share] : sides) coverage[split][side] = share;
    v["alphabet_coverage_of_other_splits"] = coverage;
    if (rec.shards) {
      const ShardsReport& s = *rec.shards;
      v["unused_in_train"] = s.separate ? ordered_json{{"source", s.unused[0]}, {"target", s.unused[1]}}
                                        : ordered_json{{"shared", s.unused[0]}};
    }
    j["vocabulary"] = v;
  }
  if (!rec.stopped_after.empty()) j["stopped_after"] = rec.stopped_after;
  return j;
}

static Status write_summary(const StepContext& in, int threads) {
  RunRecord& rec = *in.record;

  // Vocabularies for alphabet coverage, if this run learned any (in
  // memory, from the vocabulary step).
  const Vocabulary* per_side[2] = {nullptr, nullptr};
  const auto* learned = in.products->get<LearnedVocabularies>(kVocabularyProduct);
  for (size_t i = 0; learned != nullptr && i < learned->vocabularies.size(); ++i) {
    const std::string& side = learned->vocabularies[i]->info().side;
    if (side == "shared" || side == "source") per_side[0] = learned->vocabularies[i].get();
    if (side == "shared" || side == "target") per_side[1] = learned->vocabularies[i].get();
  }

  SummaryFigures f;
  f.record = &rec;
  for (const auto& [name, pairs] : rec.splits) {
    // Lengths were gathered in pass 1; alphabet coverage needs a scan, done
    // only for the (small) splits other than train.
    SplitStats st;
    const SplitLengths& lengths = rec.lengths[name];
    if (name != "train" && (per_side[0] || per_side[1])) {
      auto scanned = scan(in.dir->file(name + ".tsv"), per_side, threads);
      if (!scanned.ok()) return scanned.error();
      st = std::move(scanned.value());
    }
    const ShardSplit* shard_split = nullptr;
    for (size_t k = 0; rec.shards && k < rec.shards->splits.size(); ++k)
      if (rec.shards->splits[k].split == name) shard_split = &rec.shards->splits[k];
    SplitFigures sp;
    sp.name = name;
    sp.pairs = pairs;
    std::vector<std::pair<std::string, double>> covered;
    for (int s = 0; s < 2; ++s) {
      SideFigures& x = sp.side[s];
      x.chars = hist_figures(lengths.chars[s], kCharBin);
      x.words = hist_figures(lengths.words[s], kWordBin);
      if (shard_split != nullptr) {
        const TokenLengths& t = shard_split->side[s];
        TokenFigures tf;
        tf.lengths = hist_figures(t.lengths, kTokenBin);
        tf.byte_token_rate = byte_token_rate(t);
        tf.unknown = t.unknown;
        uint64_t words = lengths.words[s].sum() - t.dropped_words;
        tf.tokens_per_word = words ? static_cast<double>(t.lengths.sum()) / static_cast<double>(words) : 0.0;
        x.tokens = std::move(tf);
      }
      if (per_side[s] && name != "train" && st.side[s].letters > 0)
        covered.emplace_back(s ? "target" : "source",
                             static_cast<double>(st.side[s].covered) / static_cast<double>(st.side[s].letters));
    }
    if (!covered.empty()) f.coverage.emplace_back(name, std::move(covered));
    // The histogram holds each ratio floored to 0.01 (for its bins and
    // percentiles); the mean is the exact mean of the ratios.
    sp.ratio = hist_figures(lengths.ratio, kRatioBin, 100.0);
    if (lengths.ratio.count() > 0) sp.ratio.mean = lengths.ratio_sum / static_cast<double>(lengths.ratio.count());
    f.splits.push_back(std::move(sp));
  }

  std::string text = summary_json(f).dump(2, ' ', false, ordered_json::error_handler_t::replace) + "\n";
  SHEAF_TRY(write_output(*in.dir, rec, {"summary.json", "summary", "", "", 1}, text));
  return write_output(*in.dir, rec, {"report.html", "report", "", "", 1}, render_report(f));
}

static Result<std::string> summary_text_unchecked(const std::string& summary_json);

Result<std::string> summary_text(const std::string& summary_json) {
  // A checked reader: every access below is typed, and nlohmann-json reports
  // a missing key or a wrong type by an exception, which becomes an error
  // value here (a damaged summary.json never aborts the tool).
  try {
    return summary_text_unchecked(summary_json);
  } catch (const nlohmann::json::exception& e) {
    return Error(ErrorKind::kInput, std::string("summary.json is damaged (") + e.what() +
                                        "); run the pipeline again to write it anew");
  }
}

static Result<std::string> summary_text_unchecked(const std::string& summary_json) {
  auto j = ordered_json::parse(summary_json, nullptr, false);
  if (j.is_discarded() || !j.is_object() || !j.contains("format") || j["format"] != "sheaf-summary")
    return Error(ErrorKind::kInput, "not a sheaf summary.json");
  std::ostringstream o;
  char buf[256];
  auto num = [&](uint64_t v) {
    std::string d = std::to_string(v), out;
    for (size_t i = 0; i < d.size(); ++i) {
      if (i > 0 && (d.size() - i) % 3 == 0) out += ',';
      out += d[i];
    }
    return out;
  };
  o << "pairs read " << num(j["counts"]["read"]) << ", kept " << num(j["counts"]["kept"]) << ", rejected "
    << num(j["counts"]["rejected"]) << "\n";
  std::snprintf(buf, sizeof buf, "  %-14s %12s %12s  %s\n", "stage", "in", "dropped", "by reason");
  o << buf;
  for (const auto& s : j["funnel"]) {
    std::string reasons;
    for (auto& [k, v] : s["rejected"].items()) reasons += (reasons.empty() ? "" : ", ") + k + " " + num(v);
    std::string changed = text_changes(s);
    if (!changed.empty()) reasons += (reasons.empty() ? "" : "; ") + changed;
    std::snprintf(buf, sizeof buf, "  %-14s %12s %12s  ", s["name"].get<std::string>().c_str(), num(s["in"]).c_str(),
                  num(s["in"].get<uint64_t>() - s["out"].get<uint64_t>()).c_str());
    o << buf << reasons << "\n";
  }
  if (j.contains("corpora")) {
    std::snprintf(buf, sizeof buf, "  %-14s %12s %12s %12s  %-6s %s\n", "corpus", "read", "kept", "rejected", "weight",
                  "pairs per split");
    o << buf;
    for (const auto& c : j["corpora"]) {
      std::string per;
      for (auto& [k, v] : c["splits"].items()) per += (per.empty() ? "" : ", ") + k + " " + num(v);
      std::snprintf(buf, sizeof buf, "  %-14s %12s %12s %12s  %-6g %s%s\n", c["name"].get<std::string>().c_str(),
                    num(c["counts"]["read"]).c_str(), num(c["counts"]["kept"]).c_str(),
                    num(c["counts"]["rejected"]).c_str(), c["weight"].get<double>(), per.c_str(),
                    c["held_out"].get<bool>() ? "" : " (not held out)");
      o << buf;
    }
  }
  o << "  split          pairs   source chars/words/tokens (mean, p99)   target chars/words/tokens (mean, p99)\n";
  for (auto& [name, s] : j["splits"].items()) {
    std::snprintf(buf, sizeof buf, "  %-8s %11s", name.c_str(), num(s["pairs"]).c_str());
    o << buf;
    for (const char* side : {"source", "target"}) {
      const auto& x = s[side];
      std::string t = x.contains("tokens") ? std::to_string(static_cast<int>(x["tokens"]["mean"].get<double>() + 0.5)) + "/" +
                                                 std::to_string(x["tokens"]["p99"].get<uint64_t>())
                                           : "-";
      std::snprintf(buf, sizeof buf, "   %5.0f/%-4llu %4.0f/%-4llu %9s", x["chars"]["mean"].get<double>(),
                    static_cast<unsigned long long>(x["chars"]["p99"].get<uint64_t>()), x["words"]["mean"].get<double>(),
                    static_cast<unsigned long long>(x["words"]["p99"].get<uint64_t>()), t.c_str());
      o << buf;
    }
    o << "\n";
  }
  bool leak = false;
  for (const auto& ov : j["split_overlap"]) leak |= ov["shared_keys"].get<uint64_t>() != 0;
  if (!j["split_overlap"].empty()) o << "  split overlap: " << (leak ? "NOT ZERO (see summary.json)" : "none") << "\n";
  if (j.contains("vocabulary")) {
    for (const auto& v : j["vocabulary"]["vocabularies"]) {
      o << "  vocabulary " << v["side"].get<std::string>() << ": " << num(v["size"]) << " tokens (" << num(v["alphabet"])
        << " characters, " << num(v["merges"]) << " merges" << (v["stopped_early"].get<bool>() ? ", stopped early: no pair left with min_count" : "")
        << ")\n";
      for (auto& [side, rows] : v["sweep"].items()) {
        o << "    sweep on " << j["vocabulary"]["sweep_split"].get<std::string>() << " (" << side << "):";
        for (const auto& r : rows) {
          // A size the learner never reached is shown with the size it had.
          uint64_t size = r["size"].get<uint64_t>(), reached = r.value("effective_size", size);
          std::string shown = std::to_string(size);
          if (reached < size) shown += " (reached " + std::to_string(reached) + ")";
          std::snprintf(buf, sizeof buf, "  %s: %.1f tok, p99 %llu", shown.c_str(), r["mean_tokens"].get<double>(),
                        static_cast<unsigned long long>(r["p99_tokens"].get<uint64_t>()));
          o << buf;
        }
        o << "\n";
      }
    }
  }
  if (j.contains("stopped_after")) o << "  stopped after stage \"" << j["stopped_after"].get<std::string>() << "\" (--until)\n";
  return o.str();
}

namespace {

class SummaryStep : public Step {
 public:
  Status run(StepContext& ctx) override { return write_summary(ctx, ctx.threads); }
};

}  // namespace

std::unique_ptr<Step> make_summary_step() { return std::make_unique<SummaryStep>(); }

}  // namespace sheaf
