#include "stages/shards.h"

#include <oneapi/tbb/parallel_for.h>
#include <oneapi/tbb/parallel_pipeline.h>
#include <oneapi/tbb/task_arena.h>

#include <algorithm>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <memory>
#include <nlohmann/json.hpp>
#include <optional>
#include <span>

#include "core/batch_pool.h"
#include "core/interrupt.h"
#include "core/tsan.h"
#include "io/line_blocks.h"
#include "core/stats.h"
#include "core/text.h"
#include "shards/shard_writer.h"
#include "stages/vocabulary.h"
#include "subword/codec.h"

namespace sheaf {

const StageKind& shards_kind() {
  static const StageKind k{
      "shards",
      "token-id shards for training, one set per split, memory-mappable",
      StageRole::kStep,
      {
          {"max_pairs", FieldType::kInt, int64_t{500000}, "pairs per shard at most", 1, 4e9},
          {"max_bytes", FieldType::kInt, int64_t{0}, "bytes of ids per shard at most (0 = no limit)", 0, 1e15},
          {"order",
           FieldType::kChoice,
           std::string("input"),
           "input order, or grouped by length within each shard",
           0,
           0,
           {"input", "length"}},
          {"bos", FieldType::kBool, false, "put the begin-of-sequence id before each side"},
          {"eos", FieldType::kBool, true, "put the end-of-sequence id after each side"},
          {"source_tag", FieldType::kString, std::string(""),
           "a user-defined token put at the start of every source side (after bos)"},
          {"target_tag", FieldType::kString, std::string(""),
           "a user-defined token put at the start of every target side (after bos)"},
          {"max_source_tokens", FieldType::kInt, int64_t{0},
           "drop pairs whose source has more ids than this, bos/eos/tag included (0 = no limit)", 0, 4e9},
          {"max_target_tokens", FieldType::kInt, int64_t{0},
           "drop pairs whose target has more ids than this, bos/eos/tag included (0 = no limit)", 0, 4e9},
      },
      {"splits", "vocabulary", "pass1"},
      {"shards"}};
  return k;
}

namespace {

using nlohmann::ordered_json;

// A block of whole lines of a split file and their ids, per side: all ids
// back to back and where each pair's ids end.
struct Encoded {
  std::string text;
  std::vector<uint32_t> ids[2];
  std::vector<uint64_t> ends[2];
  EncodeStats stats[2];
  std::span<const uint32_t> pair(int side, size_t i) const {
    uint64_t b = i == 0 ? 0 : ends[side][i - 1];
    return {ids[side].data() + b, ends[side][i] - b};
  }
};

}  // namespace

static Status run_shards(const StepContext& in, const StageSpec& spec,
                  const std::vector<std::shared_ptr<const Vocabulary>>& vocabs, std::vector<LearnedUnits> units,
                  int threads) {
  const Params& p = spec.params;
  RunRecord& rec = *in.record;
  const Vocabulary& vs = *vocabs[0];
  const Vocabulary& vt = vocabs.size() > 1 ? *vocabs[1] : *vocabs[0];
  // The encoders' caches are sized for the split files; one encoder (and one
  // cache) for both sides of a shared vocabulary.
  uint64_t text_bytes = 0;
  for (const auto& entry : rec.splits) {
    std::error_code ec;
    uint64_t n = std::filesystem::file_size(in.dir->file(entry.first + ".tsv"), ec);
    if (!ec) text_bytes += n;
  }
  Encoder enc_s(vs, SIZE_MAX, text_bytes);
  std::optional<Encoder> own_t;
  if (vocabs.size() > 1) own_t.emplace(vt, SIZE_MAX, text_bytes);
  const Encoder& enc_t = own_t ? *own_t : enc_s;
  tbb::task_arena arena(threads);
  for (size_t f = 0; f < std::min(units.size(), size_t{2}); ++f) {
    const LearnedUnits& u = units[f];
    const Encoder& enc = f == 0 ? enc_s : enc_t;
    const Vocabulary& v = f == 0 ? vs : vt;
    arena.execute([&] {
      tbb::parallel_for(tbb::blocked_range<size_t>(0, u.size(), 1 << 14), [&](const tbb::blocked_range<size_t>& r) {
        std::string text;
        for (size_t k = r.begin(); k < r.end(); ++k)
          if (u.text_of(k, v, text)) enc.remember(text, u.ids_of(k));
      });
    });
  }
  units.clear();
  ShardSettings set;
  set.id_width = std::max(vs.size(), vt.size()) <= 65536 ? 2 : 4;
  set.source_vocab = vs.checksum();
  set.target_vocab = vt.checksum();
  set.order = p.text("order") == "length" ? kLengthOrder : kInputOrder;
  for (int k = 0; k < 4; ++k) {
    set.source_specials[k] = vs.special(static_cast<Special>(k));
    set.target_specials[k] = vt.special(static_cast<Special>(k));
  }
  bool bos = p.flag("bos"), eos = p.flag("eos");
  // Tags: user-defined tokens of the side's vocabulary.
  int64_t tag[2] = {-1, -1};
  for (int s = 0; s < 2; ++s) {
    const char* key = s == 0 ? "source_tag" : "target_tag";
    const std::string& t = p.text(key);
    if (t.empty()) continue;
    tag[s] = (s == 0 ? vs : vt).user_id(t);
    if (tag[s] < 0)
      return Error(ErrorKind::kPipeline,
                   "stage \"" + spec.name + "\": " + key + " \"" + t +
                       "\" is not a user-defined token of the vocabulary; list it in the vocabulary stage's user_tokens",
                   p.where(key).empty() ? spec.where : p.where(key));
  }
  set.flags = (bos ? uint32_t{kHasBos} : 0u) | (eos ? uint32_t{kHasEos} : 0u);
  uint64_t max_pairs = static_cast<uint64_t>(p.integer("max_pairs"));
  // Token limits: a pair over either is left out of the shards, with a row
  // in rejected.tsv (reason too-many-tokens:SIDE) and a funnel entry.
  const uint64_t max_tokens[2] = {static_cast<uint64_t>(p.integer("max_source_tokens")),
                                  static_cast<uint64_t>(p.integer("max_target_tokens"))};
  const bool limited = max_tokens[0] > 0 || max_tokens[1] > 0;
  Pass1Output* pass1 = nullptr;
  if (limited) {
    Pass1Output** got = in.products->get<Pass1Output*>(kPass1Product);
    if (got == nullptr) return Error(ErrorKind::kInternal, "the shards step has no rejected.tsv to write to");
    pass1 = *got;
  }
  StageCount funnel{spec.name, spec.kind->kind, 0, 0, {}, {}};
  std::vector<uint64_t> corpus_drops(in.pipeline->corpora.size(), 0);
  uint64_t max_bytes = static_cast<uint64_t>(p.integer("max_bytes"));

  ShardsReport report;
  report.stage = spec.name;
  report.id_width = static_cast<uint32_t>(set.id_width);
  report.order = p.text("order");
  report.bos = bos;
  report.eos = eos;
  // Which tokens the train split uses, per side, for "unused_in_train".
  std::vector<bool> used[2] = {std::vector<bool>(vs.size(), false), std::vector<bool>(vt.size(), false)};
  for (size_t split_index = 0; split_index < rec.splits.size(); ++split_index) {
    const std::string split = rec.splits[split_index].first;
    std::ifstream file(in.dir->file(split + ".tsv"), std::ios::binary);
    std::string carry;
    if (!file) return Error(ErrorKind::kIo, "cannot read split text", Location{in.dir->file(split + ".tsv"), 0, 0, {}});
    ShardWriter writer(set);
    uint32_t index = 0;
    Histogram tokens[2];
    uint64_t pair_index = 0;  // of the split file
    uint64_t dropped_words[2] = {0, 0};  // words of the pairs a token limit left out
    EncodeStats totals[2];
    Status failed;
    auto flush = [&]() -> Status {
      char name[64];
      std::snprintf(name, sizeof name, "shards/%s.%05u.shard", split.c_str(), index);
      SHEAF_TRY(in.dir->will_create(name));
      auto w = writer.write(in.dir->file(name), index);
      if (!w.ok()) return w.error();
      rec.outputs.push_back({name, "shard", split, "", w->pairs, w->size, w->checksum});
      ++index;
      return {};
    };
    BatchPool<Encoded> pool(static_cast<size_t>(threads) * 4);
    try {
      arena.execute([&] {
        pool.run_pipeline(
            line_block_source(file, carry, pool, 1 << 20, [](Encoded& e) -> std::string& {
                           return e.text;
                         }) & tbb::make_filter<Encoded*, Encoded*>(tbb::filter_mode::parallel, [&](Encoded* e) {
                           TaskBody body;
                           handoff_acquire(e);
                           for (int s = 0; s < 2; ++s) {
                             e->ids[s].clear();
                             e->ends[s].clear();
                             e->stats[s] = EncodeStats{};
                           }
                           for_each_line(e->text, [&](std::string_view l) {
                             auto side = tsv_sides(l);
                             for (int s = 0; s < 2; ++s) {
                               const Vocabulary& v = s == 0 ? vs : vt;
                               auto& ids = e->ids[s];
                               if (bos) ids.push_back(v.special(kBos));
                               if (tag[s] >= 0) ids.push_back(static_cast<uint32_t>(tag[s]));
                               (s == 0 ? enc_s : enc_t).encode(side[s], ids, &e->stats[s]);
                               if (eos) ids.push_back(v.special(kEos));
                               e->ends[s].push_back(ids.size());
                             }
                           });
                           handoff_release(e);
                           return e;
                         }) & tbb::make_filter<Encoded*, void>(tbb::filter_mode::serial_in_order, [&](Encoded* e) {
                           TaskBody body;
                           SerialTurn turn(&writer);
                           handoff_acquire(e);
                           for (int s = 0; s < 2; ++s) {
                             totals[s].tokens += e->stats[s].tokens;
                             totals[s].byte_tokens += e->stats[s].byte_tokens;
                             totals[s].unknown += e->stats[s].unknown;
                           }
                           size_t line_start = 0;
                           for (size_t i = 0; i < e->ends[0].size(); ++i) {
                             auto src = e->pair(0, i), tgt = e->pair(1, i);
                             size_t line_end = std::min(e->text.find('\n', line_start), e->text.size());
                             std::string_view line(e->text.data() + line_start, line_end - line_start);
                             line_start = line_end + 1;
                             ++funnel.in;
                             uint64_t index = pair_index++;
                             int over = max_tokens[0] > 0 && src.size() > max_tokens[0]   ? 0
                                        : max_tokens[1] > 0 && tgt.size() > max_tokens[1] ? 1
                                                                                          : -1;
                             if (over >= 0) {
                               std::string code = "too-many-tokens";
                               std::string reason = code + ":" + side_name(over);
                               auto from = pass1->origin(split_index, index);
                               if (!from.ok()) {
                                 pool.release(e);
                                 throw ErrorException{from.error()};
                               }
                               auto sides = tsv_sides(line);
                               pass1->reject(*from, spec.name, reason, sides[0], sides[1]);
                               // The split's token figures speak of the pairs
                               // in the shards: take this pair's back out.
                               for (int s = 0; s < 2; ++s) {
                                 EncodeStats ps;
                                 std::vector<uint32_t> scratch;
                                 (s == 0 ? enc_s : enc_t).encode(sides[s], scratch, &ps);
                                 totals[s].tokens -= ps.tokens;
                                 totals[s].byte_tokens -= ps.byte_tokens;
                                 totals[s].unknown -= ps.unknown;
                                 dropped_words[s] += count_words(sides[s]);
                               }
                               ++funnel.reasons[code];
                               auto& ex = funnel.examples[code];
                               if (ex.size() < 3) {
                                 std::string text;
                                 repair_utf8(line.substr(0, 160), text);
                                 ex.push_back({from->line, reason, std::move(text)});
                               }
                               if (from->corpus < corpus_drops.size()) ++corpus_drops[from->corpus];
                               continue;
                             }
                             ++funnel.out;
                             if (split == "train") {
                               for (uint32_t id : src) used[0][id] = true;
                               for (uint32_t id : tgt) used[1][id] = true;
                             }
                             tokens[0].add(src.size());
                             tokens[1].add(tgt.size());
                             // max_bytes is a bound: a pair that would cross it
                             // opens the next shard (a pair larger than the
                             // bound alone gets a shard of its own).
                             uint64_t pair_bytes = (src.size() + tgt.size()) * set.id_width;
                             if (max_bytes > 0 && writer.pairs() > 0 && writer.id_bytes() + pair_bytes > max_bytes) {
                               Status st = flush();
                               if (!st.ok()) {
                                 pool.release(e);
                                 throw ErrorException{st.error()};
                               }
                             }
                             writer.add(src, tgt);
                             if (writer.pairs() >= max_pairs || (max_bytes > 0 && writer.id_bytes() >= max_bytes)) {
                               Status st = flush();
                               if (!st.ok()) {
                                 pool.release(e);
                                 throw ErrorException{st.error()};
                               }
                             }
                           }
                           pool.release(e);
                         }));
      });
    } catch (const ErrorException& e) {
      return e.error;
    }
    if (writer.pairs() > 0 || index == 0) SHEAF_TRY(flush());
    ShardSplit& sp = report.splits.emplace_back();
    sp.split = split;
    for (int s = 0; s < 2; ++s) {
      sp.side[s].lengths = std::move(tokens[s]);
      sp.side[s].tokens = totals[s].tokens;
      sp.side[s].byte_tokens = totals[s].byte_tokens;
      sp.side[s].unknown = totals[s].unknown;
      sp.side[s].dropped_words = dropped_words[s];
    }
    sp.shards = index;
    if (split_index == 0 && limited && rec.splits[0].second > 0 && sp.side[0].lengths.count() == 0)
      return Error(ErrorKind::kData,
                   "stage \"" + spec.name + "\": no pair of the " + split +
                       " split is within the token limits (max_source_tokens = " + std::to_string(max_tokens[0]) +
                       ", max_target_tokens = " + std::to_string(max_tokens[1]) +
                       ", bos, tag and eos included); raise them, or set 0 for no limit",
                   spec.where);
  }
  // Tokens (other than special and byte tokens) that no train sentence uses.
  auto unused = [](const Vocabulary& v, const std::vector<bool>& u) {
    uint64_t n = 0;
    for (uint32_t id = v.first_char(); id < v.size(); ++id) n += !u[id];
    return n;
  };
  report.separate = vocabs.size() > 1;
  if (report.separate) {
    report.unused[0] = unused(vs, used[0]);
    report.unused[1] = unused(vt, used[1]);
  } else {
    std::vector<bool> both(vs.size());
    for (size_t i = 0; i < both.size(); ++i) both[i] = used[0][i] || used[1][i];
    report.unused[0] = unused(vs, both);
  }
  rec.shards = std::move(report);
  if (limited) {
    // The funnel gains the step: what reached it and what it wrote. Dropped
    // pairs count as rejected (read = kept + rejected still holds; kept is
    // what the shards hold), though their text stays in the split file.
    uint64_t dropped = funnel.in - funnel.out;
    rec.kept -= dropped;
    rec.rejected += dropped;
    for (size_t c = 0; c < rec.corpora.size(); ++c) {
      CorpusCount& cc = rec.corpora[c];
      uint64_t d = c < corpus_drops.size() ? corpus_drops[c] : 0;
      cc.kept -= d;
      cc.rejected += d;
      if (d > 0) cc.reasons[spec.name + "/too-many-tokens"] += d;
      cc.stage_out.push_back(cc.stage_out.empty() ? 0 : cc.stage_out.back() - d);
    }
    rec.stages.push_back(std::move(funnel));
  }
  return {};
}

namespace {

class ShardsStep : public Step {
 public:
  Status run(StepContext& ctx) override {
    auto* learned = ctx.products->get<LearnedVocabularies>(kVocabularyProduct);
    if (learned == nullptr || learned->vocabularies.empty())
      return Error(ErrorKind::kInternal, "the shards step ran without a vocabulary", ctx.spec->where);
    std::vector<LearnedUnits> units = std::move(learned->units);
    learned->units.clear();
    return run_shards(ctx, *ctx.spec, learned->vocabularies, std::move(units), ctx.threads);
  }
};

}  // namespace

namespace {

// Checks source_tag and target_tag against the vocabulary the step will
// encode with, when the step is built (by `sheaf validate`, and by `sheaf
// run` before pass 1): the user tokens of the vocabulary stage before this
// one, or, when that stage reuses vocabulary files, the files' user tokens.
// run_shards checks again against the vocabulary it is given.
Status check_tags(const Pipeline& p, const StageSpec& spec) {
  const Params& q = spec.params;
  if (q.text("source_tag").empty() && q.text("target_tag").empty()) return {};
  const StageSpec* voc = nullptr;
  for (const StageSpec& s : p.stages) {
    if (&s == &spec) break;
    if (s.kind->kind == vocabulary_kind().kind) voc = &s;
  }
  if (voc == nullptr) return {};  // the loader names a missing vocabulary
  auto plan = vocabulary_plan(p, *voc);
  if (!plan.ok()) return plan.error();
  std::vector<Vocabulary> reused;
  for (size_t s = 0; s < 2; ++s) {
    const char* key = s == 0 ? "source_tag" : "target_tag";
    const std::string& t = q.text(key);
    if (t.empty()) continue;
    Location where = q.where(key).empty() ? spec.where : q.where(key);
    std::string head = "stage \"" + spec.name + "\": " + key + " \"" + t + "\" ";
    if (plan->reuse.empty()) {
      const auto& u = plan->user_tokens;
      if (std::find(u.begin(), u.end(), t) == u.end())
        return Error(ErrorKind::kPipeline,
                     head + "is not one of the user_tokens of vocabulary stage \"" + voc->name +
                         "\"; add it to that stage's user_tokens, or set " + key + " = \"\" for no tag",
                     where);
      continue;
    }
    if (reused.empty()) {
      for (const auto& path : plan->reuse) {
        auto v = Vocabulary::load(path);
        if (!v.ok()) return v.error();
        reused.push_back(std::move(v.value()));
      }
    }
    size_t file = std::min(s, reused.size() - 1);
    if (reused[file].user_id(t) < 0) {
      std::string have;
      for (const auto& [tok, id] : reused[file].user_tokens()) have += (have.empty() ? "" : ", ") + tok;
      return Error(ErrorKind::kPipeline,
                   head + "is not a user-defined token of the vocabulary that stage \"" + voc->name + "\" reuses (" +
                       plan->reuse[file] + ", whose user tokens are " + (have.empty() ? "none" : have) +
                       "); use one of those, set " + key +
                       " = \"\" for no tag, or learn a new vocabulary with it in user_tokens",
                   where);
    }
  }
  return {};
}

}  // namespace

Result<std::unique_ptr<Step>> make_shards_step(const Pipeline& p, const StageSpec& spec) {
  SHEAF_TRY(check_tags(p, spec));
  return std::unique_ptr<Step>(std::make_unique<ShardsStep>());
}

}  // namespace sheaf
