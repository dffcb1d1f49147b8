#include "pipeline/pass1_writer.h"

#include <oneapi/tbb/enumerable_thread_specific.h>
#include <oneapi/tbb/parallel_pipeline.h>
#include <oneapi/tbb/task_arena.h>
#include <xxhash.h>

#include <filesystem>
#include <fstream>
#include <memory>
#include <unordered_set>

#include "core/batch_pool.h"
#include "core/text.h"
#include "core/tsan.h"
#include "io/line_blocks.h"
#include "io/output_file.h"

namespace sheaf {

namespace {

std::string reason_code(const std::string& reason) { return reason.substr(0, reason.find(':')); }
constexpr size_t kExamples = 3;

class Pass1WriterImpl {
 public:
  Pass1WriterImpl(const RunDir& dir, RunRecord& rec, const std::vector<std::string>& splits, const SplitRouter* split,
              const Pipeline& p)
      : dir_(dir), rec_(rec), names_(splits), split_(split), pipeline_(p), keys_(splits.size()) {
    for (const auto& c : p.corpora) aligned_.push_back(c.layout == Layout::kAligned);
  }

  Status open() {
    for (const auto& n : names_) lengths_.push_back(&rec_.lengths[n]);
    for (const auto& n : names_) {
      files_.push_back(std::make_unique<OutputFile>());
      SHEAF_TRY(dir_.will_create(n + ".tsv"));
      SHEAF_TRY(files_.back()->open(dir_.file(n + ".tsv")));
    }
    SHEAF_TRY(dir_.will_create("rejected.tsv"));
    SHEAF_TRY(rejected_.open(dir_.file("rejected.tsv")));
    // Where each split file's pairs came from, for rows the steps add to
    // rejected.tsv (scratch files, removed by close()).
    for (const auto& n : names_) {
      origins_.push_back(std::make_unique<OutputFile>());
      SHEAF_TRY(dir_.will_create(n + ".origins"));
      SHEAF_TRY(origins_.back()->open(dir_.file(n + ".origins")));
    }
    if (split_ && split_->deferred()) {
      SHEAF_TRY(dir_.will_create("split-spool.bin"));
      SHEAF_TRY(spool_.open(dir_.file("split-spool.bin")));
    }
    return {};
  }

  void take(PairBatch& b) {
    for (Pair& p : b.pairs) {
      ++rec_.read;
      // Stage counts: stage k saw the pair if it was not dropped before k.
      int drop = p.drop_stage;
      size_t n = rec_.stages.size();  // read, stages..., output
      size_t upto = drop == kKept ? n : drop == kReadStage ? 0 : drop == kOutputStage ? n - 1 : size_t(drop + 1);
      for (size_t k = 0; k < n && k <= upto; ++k) {
        ++rec_.stages[k].in;
        if (k < upto || drop == kKept) ++rec_.stages[k].out;
      }
      CorpusCount* cc = rec_.corpora.empty() ? nullptr : &rec_.corpora[p.corpus];
      if (cc) {
        ++cc->read;
        cc->stage_out.resize(n, 0);
        for (size_t k = 0; k < n && (k < upto || drop == kKept); ++k) ++cc->stage_out[k];
      }
      if (!p.kept()) {
        ++rec_.rejected;
        std::string code = reason_code(p.reason);
        rec_.stages[upto].reasons[code]++;
        if (cc) {
          ++cc->rejected;
          ++cc->reasons[rec_.stages[upto].name + "/" + code];
        }
        auto& ex = rec_.stages[upto].examples[code];
        if (ex.size() < kExamples) {
          // The start of the line, made valid UTF-8 for JSON (the exact bytes
          // are in rejected.tsv).
          std::string text;
          repair_utf8(p.raw.substr(0, 160), text);
          if (aligned_[p.corpus]) {
            text += '\t';
            repair_utf8(p.raw_target.substr(0, 160), text);
          }
          ex.push_back({p.line, p.reason, std::move(text)});
        }
        write_rejected(p, upto);
        continue;
      }
      ++rec_.kept;
      if (cc) ++cc->kept;
      if (split_ && split_->deferred()) {
        spool(p);
        continue;
      }
      route(p.text[0], p.text[1], p.split, p);
    }
  }

  // Runs after the last batch: routes a count-mode spool, commits files.
  Status finish(int threads) {
    if (split_ && split_->deferred()) {
      SHEAF_TRY(spool_.commit());
      SHEAF_TRY(route_spool());
      std::error_code ec;
      std::filesystem::remove(spool_.path(), ec);
    }
    for (auto& f : files_) SHEAF_TRY(f->commit());
    for (auto& f : origins_) SHEAF_TRY(f->commit());
    for (size_t i = 0; i < names_.size(); ++i) {
      rec_.splits.emplace_back(names_[i], files_[i]->records());
      rec_.outputs.push_back(
          {names_[i] + ".tsv", "text", names_[i], "", files_[i]->records(), files_[i]->size(), files_[i]->checksum()});
    }
    // rejected.tsv stays open for the steps; its entry keeps its place.
    // Its rows so far (pass 1's) are final whatever the steps do.
    kept_rows_ = rejected_.mark();
    rejected_entry_ = rec_.outputs.size();
    rec_.outputs.push_back({"rejected.tsv", "rejected", "", "", 0, 0, 0});
    // Overlap between splits, measured on unseeded hashes of the split key
    // (independent of the seeded hash that assigned them). Non-train keys are
    // held in memory (those splits are small); train is read back once, in
    // blocks looked up on all threads.
    if (split_) {
      std::vector<uint64_t> train_hits(names_.size(), 0);
      std::ifstream in(files_[0]->path(), std::ios::binary);
      std::string carry;
      BatchPool<std::string> pool(static_cast<size_t>(threads) * 4);
      tbb::enumerable_thread_specific<std::vector<uint64_t>> hits(std::vector<uint64_t>(names_.size(), 0));
      tbb::task_arena arena(threads);
      try {
        arena.execute([&] {
          pool.run_pipeline(
              line_block_source(in, carry, pool, 1 << 16, [](std::string& block) -> std::string& { return block; }) &
                  tbb::make_filter<std::string*, void>(tbb::filter_mode::parallel, [&](std::string* block) {
                    TaskBody body;
                    handoff_acquire(block);
                    std::vector<uint64_t>& mine = hits.local();
                    Pair p;
                    for_each_line(*block, [&](std::string_view line) {
                      auto side = tsv_sides(line);
                      p.text = {side[0], side[1]};
                      std::string k = split_->key_text(p);
                      uint64_t h = XXH3_64bits(k.data(), k.size());
                      for (size_t b = 1; b < names_.size(); ++b) mine[b] += keys_[b].count(h);
                    });
                    pool.release(block);
                  }));
        });
      } catch (const ErrorException& e) {
        return e.error;  // interrupted
      }
      for (const auto& mine : hits)
        for (size_t b = 1; b < names_.size(); ++b) train_hits[b] += mine[b];
      for (size_t a = 0; a < names_.size(); ++a) {
        for (size_t b = a + 1; b < names_.size(); ++b) {
          uint64_t shared = 0;
          if (a == 0) {
            shared = train_hits[b];
          } else {
            for (uint64_t h : keys_[b]) shared += keys_[a].count(h);
          }
          rec_.overlaps.push_back({names_[a], names_[b], shared});
        }
      }
    }
    return {};
  }

  void keep_rows() { kept_rows_ = rejected_.mark(); }

  // After the steps: commits rejected.tsv, removes the origin files.
  Status close(bool take_back) {
    for (auto& f : origins_) {
      std::error_code ec;
      if (f->committed()) std::filesystem::remove(f->path(), ec);
      f->discard();
    }
    for (auto& r : origin_readers_) r.reset();
    if (take_back) SHEAF_TRY(rejected_.rewind(kept_rows_));
    SHEAF_TRY(rejected_.commit());
    if (rejected_entry_ < rec_.outputs.size()) {
      OutputEntry& e = rec_.outputs[rejected_entry_];
      e.records = rejected_.records();
      e.size = rejected_.size();
      e.checksum = rejected_.checksum();
    }
    return {};
  }

  Result<Pass1Output::Origin> origin(size_t split, uint64_t index) {
    if (split >= origins_.size()) return Error(ErrorKind::kInternal, "no split " + std::to_string(split));
    origin_readers_.resize(origins_.size());
    auto& in = origin_readers_[split];
    if (!in) in = std::make_unique<std::ifstream>(origins_[split]->path(), std::ios::binary);
    Pass1Output::Origin o;
    in->seekg(static_cast<std::streamoff>(index * 12));
    in->read(reinterpret_cast<char*>(&o.corpus), 4);
    in->read(reinterpret_cast<char*>(&o.line), 8);
    if (!*in) return Error(ErrorKind::kIo, "cannot read pair " + std::to_string(index) + "'s origin",
                           Location{origins_[split]->path(), 0, 0, {}});
    return o;
  }

  void reject(const Pass1Output::Origin& from, std::string_view stage, std::string_view reason, std::string_view source,
              std::string_view target) {
    OutputFile& f = rejected_;
    f.write(pipeline_.origin(from.corpus, from.line));
    f.write("\t");
    f.write(stage);
    f.write("\t");
    f.write(reason);
    f.write("\t-\t");
    f.write(source);
    f.write("\t");
    f.write(target);
    f.write("\n");
    f.add_record();
  }

  Status status() const {
    for (const auto& f : files_) SHEAF_TRY(f->status());
    for (const auto& f : origins_) SHEAF_TRY(f->status());
    SHEAF_TRY(rejected_.status());
    return spool_.status();
  }

  void discard() {
    for (auto& f : files_) f->discard();
    rejected_.discard();
    for (auto& f : origins_) {
      std::error_code ec;
      if (f->committed()) std::filesystem::remove(f->path(), ec);
      f->discard();
    }
    spool_.discard();
  }

 private:
  void write_rejected(const Pair& p, size_t stage) {
    OutputFile& f = rejected_;
    f.write(pipeline_.origin(p.corpus, p.line));
    f.write("\t");
    f.write(rec_.stages[stage].name);
    f.write("\t");
    f.write(p.reason);
    f.write("\t");
    if (aligned_[p.corpus]) {
      f.write(std::to_string(p.raw.size()));
      f.write("\t");
      f.write(p.raw);
      f.write("\t");
      f.write(p.raw_target);
    } else {
      f.write("-\t");
      f.write(p.raw);
    }
    f.write("\n");
    f.add_record();
  }

  void route(std::string_view s, std::string_view t, int split, const Pair& p) {
    OutputFile& f = *files_[static_cast<size_t>(split)];
    SplitLengths& len = *lengths_[static_cast<size_t>(split)];
    for (int side = 0; side < 2; ++side) {
      len.chars[side].add(p.chars[static_cast<size_t>(side)]);
      len.words[side].add(p.words[static_cast<size_t>(side)]);
    }
    if (p.chars[1] > 0) {
      len.ratio.add(uint64_t{p.chars[0]} * 100 / p.chars[1]);
      len.ratio_sum += static_cast<double>(p.chars[0]) / static_cast<double>(p.chars[1]);
    }
    f.write(s);
    f.write("\t");
    f.write(t);
    f.write("\n");
    f.add_record();
    OutputFile& o = *origins_[static_cast<size_t>(split)];
    o.write(std::string_view(reinterpret_cast<const char*>(&p.corpus), 4));
    o.write(std::string_view(reinterpret_cast<const char*>(&p.line), 8));
    if (!rec_.corpora.empty()) ++rec_.corpora[p.corpus].splits[names_[static_cast<size_t>(split)]];
    if (split_ && split != 0) {
      std::string k = split_->key_text(p);
      keys_[static_cast<size_t>(split)].insert(XXH3_64bits(k.data(), k.size()));
    }
  }

  void spool(const Pair& p) {
    uint64_t h = p.key[0];
    uint32_t n0 = static_cast<uint32_t>(p.text[0].size()), n1 = static_cast<uint32_t>(p.text[1].size());
    spool_.write(std::string_view(reinterpret_cast<const char*>(&h), 8));
    spool_.write(std::string_view(reinterpret_cast<const char*>(&n0), 4));
    spool_.write(std::string_view(reinterpret_cast<const char*>(&n1), 4));
    spool_.write(std::string_view(reinterpret_cast<const char*>(p.chars.data()), 8));
    spool_.write(std::string_view(reinterpret_cast<const char*>(p.words.data()), 8));
    spool_.write(std::string_view(reinterpret_cast<const char*>(&p.corpus), 4));
    spool_.write(std::string_view(reinterpret_cast<const char*>(&p.line), 8));
    spool_.write(p.text[0]);
    spool_.write(p.text[1]);
    if (!pipeline_.corpora[p.corpus].held_out) {
      // It may have to be dropped at the end (held-out-key): keep what
      // rejected.tsv needs.
      uint32_t r0 = static_cast<uint32_t>(p.raw.size()), r1 = static_cast<uint32_t>(p.raw_target.size());
      spool_.write(std::string_view(reinterpret_cast<const char*>(&r0), 4));
      spool_.write(std::string_view(reinterpret_cast<const char*>(&r1), 4));
      spool_.write(p.raw);
      spool_.write(p.raw_target);
    }
  }

  Status route_spool() {
    std::ifstream in(spool_.path(), std::ios::binary);
    std::string s, t, raw, raw_target;
    Pair p;
    for (;;) {
      uint64_t h;
      uint32_t n0, n1;
      if (!in.read(reinterpret_cast<char*>(&h), 8)) break;
      in.read(reinterpret_cast<char*>(&n0), 4);
      in.read(reinterpret_cast<char*>(&n1), 4);
      in.read(reinterpret_cast<char*>(p.chars.data()), 8);
      in.read(reinterpret_cast<char*>(p.words.data()), 8);
      in.read(reinterpret_cast<char*>(&p.corpus), 4);
      in.read(reinterpret_cast<char*>(&p.line), 8);
      s.resize(n0);
      t.resize(n1);
      in.read(s.data(), n0);
      in.read(t.data(), n1);
      if (in && p.corpus < pipeline_.corpora.size() && !pipeline_.corpora[p.corpus].held_out) {
        uint32_t r0 = 0, r1 = 0;
        in.read(reinterpret_cast<char*>(&r0), 4);
        in.read(reinterpret_cast<char*>(&r1), 4);
        raw.resize(r0);
        raw_target.resize(r1);
        in.read(raw.data(), r0);
        in.read(raw_target.data(), r1);
        p.raw = raw;
        p.raw_target = raw_target;
      }
      if (!in || p.corpus >= pipeline_.corpora.size())
        return Error(ErrorKind::kIo, "the split spool file is damaged", Location{spool_.path(), 0, 0, {}});
      p.text = {s, t};
      int split = split_->assign(h, p.corpus);
      if (split < 0) {
        drop_late(p, "held-out-key:" + names_[static_cast<size_t>(split_->assign(h, 0))]);
        continue;
      }
      route(s, t, split, p);
    }
    return {};
  }

  // A pair the split stage drops after the pass (held-out-key): it was
  // counted as kept through the output; count it as dropped by the split.
  void drop_late(Pair& p, std::string reason) {
    size_t n = rec_.stages.size(), at = n - 2;  // the split stage, just before "output"
    std::string code = reason_code(reason);
    p.reason = std::move(reason);
    --rec_.kept;
    ++rec_.rejected;
    --rec_.stages[at].out;
    --rec_.stages[n - 1].in;
    --rec_.stages[n - 1].out;
    rec_.stages[at].reasons[code]++;
    if (!rec_.corpora.empty()) {
      CorpusCount& c = rec_.corpora[p.corpus];
      --c.kept;
      ++c.rejected;
      --c.stage_out[at];
      --c.stage_out[n - 1];
      ++c.reasons[rec_.stages[at].name + "/" + code];
    }
    write_rejected(p, at);
  }

 private:
  const RunDir& dir_;
  RunRecord& rec_;
  std::vector<std::string> names_;
  const SplitRouter* split_;
  const Pipeline& pipeline_;
  std::vector<bool> aligned_;  // per corpus
  std::vector<std::unique_ptr<OutputFile>> files_;
  std::vector<SplitLengths*> lengths_;
  OutputFile rejected_, spool_;
  size_t rejected_entry_ = SIZE_MAX;  // rejected.tsv's place in rec_.outputs
  OutputFile::Mark kept_rows_;  // rejected.tsv up to the end of pass 1 or of the last step that succeeded
  std::vector<std::unique_ptr<OutputFile>> origins_;  // per split: (corpus u32, line u64) per pair
  std::vector<std::unique_ptr<std::ifstream>> origin_readers_;
  std::vector<std::unordered_set<uint64_t>> keys_;
};

}  // namespace

struct Pass1Writer::Impl : Pass1WriterImpl {
  using Pass1WriterImpl::Pass1WriterImpl;
};

Pass1Writer::Pass1Writer(const RunDir& dir, RunRecord& rec, const std::vector<std::string>& splits,
                         const SplitRouter* split, const Pipeline& p)
    : impl_(std::make_unique<Impl>(dir, rec, splits, split, p)) {}
Pass1Writer::~Pass1Writer() = default;
Status Pass1Writer::open() { return impl_->open(); }
void Pass1Writer::take(PairBatch& b) { impl_->take(b); }
Status Pass1Writer::finish(int threads) { return impl_->finish(threads); }
Status Pass1Writer::status() const { return impl_->status(); }
void Pass1Writer::discard() { impl_->discard(); }
void Pass1Writer::keep_rows() { impl_->keep_rows(); }
Status Pass1Writer::close(bool take_back) { return impl_->close(take_back); }
Result<Pass1Output::Origin> Pass1Writer::origin(size_t split, uint64_t index) { return impl_->origin(split, index); }
void Pass1Writer::reject(const Origin& from, std::string_view stage, std::string_view reason, std::string_view source,
                         std::string_view target) {
  impl_->reject(from, stage, reason, source, target);
}

}  // namespace sheaf
