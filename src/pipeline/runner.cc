#include "pipeline/runner.h"

#include <oneapi/tbb/concurrent_queue.h>
#include <oneapi/tbb/enumerable_thread_specific.h>
#include <oneapi/tbb/parallel_pipeline.h>
#include <oneapi/tbb/task_arena.h>
#include <unistd.h>
#include <xxhash.h>

#include <cstring>
#include <filesystem>
#include <fstream>
#include <memory>
#include <thread>
#include <unordered_set>

#include "core/batch_pool.h"
#include "core/interrupt.h"
#include "core/text.h"
#include "io/line_blocks.h"
#include "io/output_file.h"
#include "io/pair_reader.h"
#include "pipeline/progress.h"
#include "pipeline/run_dir.h"
#include "pipeline/steps.h"
#include "stages/per_corpus.h"
#include "stages/split.h"
#include "stages/stage.h"

namespace sheaf {

namespace {

std::string reason_code(const std::string& reason) { return reason.substr(0, reason.find(':')); }
constexpr size_t kExamples = 3;

// True when `s` holds a tab, CR or LF (which would break a TSV row).
bool has_tsv_breaker(std::string_view s) {
  for (char c : s)
    if (static_cast<unsigned char>(c) <= '\r' && (c == '\t' || c == '\n' || c == '\r')) return true;
  return false;
}

// Pass 1's output side: split files, rejected.tsv, counts, overlap keys.
class Pass1Writer {
 public:
  Pass1Writer(const RunDir& dir, RunRecord& rec, const std::vector<std::string>& splits, SplitStage* split,
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
    SHEAF_TRY(rejected_.commit());
    for (size_t i = 0; i < names_.size(); ++i) {
      rec_.splits.emplace_back(names_[i], files_[i]->records());
      rec_.outputs.push_back(
          {names_[i] + ".tsv", "text", names_[i], "", files_[i]->records(), files_[i]->size(), files_[i]->checksum()});
    }
    rec_.outputs.push_back(
        {"rejected.tsv", "rejected", "", "", rejected_.records(), rejected_.size(), rejected_.checksum()});
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
          tbb::parallel_pipeline(
              pool.size(),
              line_block_source(in, carry, pool, 1 << 18, [](std::string& block) -> std::string& { return block; }) &
                  tbb::make_filter<std::string*, void>(tbb::filter_mode::parallel, [&](std::string* block) {
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

  Status status() const {
    for (const auto& f : files_) SHEAF_TRY(f->status());
    SHEAF_TRY(rejected_.status());
    return spool_.status();
  }

  void discard() {
    for (auto& f : files_) f->discard();
    rejected_.discard();
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
    spool_.write(p.text[0]);
    spool_.write(p.text[1]);
    if (!pipeline_.corpora[p.corpus].held_out) {
      // It may have to be dropped at the end (held-out-key): keep what
      // rejected.tsv needs.
      uint32_t r0 = static_cast<uint32_t>(p.raw.size()), r1 = static_cast<uint32_t>(p.raw_target.size());
      spool_.write(std::string_view(reinterpret_cast<const char*>(&p.line), 8));
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
      s.resize(n0);
      t.resize(n1);
      in.read(s.data(), n0);
      in.read(t.data(), n1);
      if (in && p.corpus < pipeline_.corpora.size() && !pipeline_.corpora[p.corpus].held_out) {
        uint32_t r0 = 0, r1 = 0;
        in.read(reinterpret_cast<char*>(&p.line), 8);
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
        drop_late(p, "held-out-key:" + names_[static_cast<size_t>(split_->assign(h))]);
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
  SplitStage* split_;
  const Pipeline& pipeline_;
  std::vector<bool> aligned_;  // per corpus
  std::vector<std::unique_ptr<OutputFile>> files_;
  std::vector<SplitLengths*> lengths_;
  OutputFile rejected_, spool_;
  std::vector<std::unordered_set<uint64_t>> keys_;
};

// Streams the bytes of over-long lines into rejected-long.tsv: per line
// "LINE<TAB>SIDE<TAB>" then its bytes then LF (a line holds no LF); LINE is
// "CORPUS:LINE" with named corpora, as in rejected.tsv.
void stream_long_lines(PairReader& rd, const Pipeline& p, const RunDir& dir, OutputFile& longs, bool& in_line) {
  rd.set_oversize_sink([&p, &dir, &longs, &in_line](size_t corpus, std::string_view side, uint64_t line,
                                                    std::string_view bytes, bool last) -> Status {
    if (longs.path().empty()) {
      SHEAF_TRY(dir.will_create("rejected-long.tsv"));
      SHEAF_TRY(longs.open(dir.file("rejected-long.tsv")));
    }
    if (!in_line) {
      longs.write(p.origin(static_cast<uint32_t>(corpus), line));
      longs.write("\t");
      longs.write(side);
      longs.write("\t");
      in_line = true;
    }
    longs.write(bytes);
    if (last) {
      longs.write("\n");
      longs.add_record();
      in_line = false;
    }
    return longs.status();
  });
}

}  // namespace

Result<RunRecord> run_pipeline(const Pipeline& pipeline_in, const RunOptions& o) {
  Pipeline p = pipeline_in;
  if (!o.inputs.empty() && p.named_corpora)
    return Error(ErrorKind::kUsage,
                 "--input replaces the files of a single [corpus]; this pipeline names its corpora, so set their "
                 "files with --set NAME.files='[\"...\"]'");
  if (!o.inputs.empty()) {
    size_t want = p.corpus.layout == Layout::kAligned ? 2 : 1;
    if (o.inputs.size() != want)
      return Error(ErrorKind::kUsage, std::string(want == 2 ? "--input names two line-aligned files (give it twice)"
                                                            : "--input names one file") +
                                          " for layout \"" + p.corpus_params.text("layout") + "\"");
    p.corpus.files = o.inputs;
    p.corpora = {p.corpus};
  }
  int last = static_cast<int>(p.stages.size()) - 1;
  if (!o.until.empty()) {
    last = p.stage_index(o.until);
    if (last < 0) {
      std::vector<std::string> names;
      for (const auto& s : p.stages) names.push_back(s.name);
      std::string hint = closest_name(o.until, names);
      return Error(ErrorKind::kUsage, "--until names \"" + o.until + "\", which is not a stage of this pipeline" +
                                          (hint.empty() ? "" : " (did you mean \"" + hint + "\"?)"));
    }
  }

  // The same checks as validate, before anything is read or written.
  SHEAF_TRY(check_stages(p));

  RunRecord rec;
  std::string resolved = render_pipeline(p);
  rec.pipeline_hash = XXH3_64bits(resolved.data(), resolved.size());
  auto layout_name = [](Layout l) {
    return l == Layout::kAligned ? "aligned" : l == Layout::kJsonl ? "jsonl" : "tsv";
  };
  rec.layout = p.named_corpora ? "corpora" : layout_name(p.corpus.layout);
  for (size_t c = 0; p.named_corpora && c < p.corpora.size(); ++c)
    rec.corpora.push_back({p.corpora[c].name, layout_name(p.corpora[c].layout), p.corpora[c].weight,
                           p.corpora[c].held_out, {}, 0, 0, 0, {}, {}, {}});
  if (last + 1 < static_cast<int>(p.stages.size())) rec.stopped_after = p.stages[static_cast<size_t>(last)].name;

  // Build the streaming stages, each knowing only the rewrites before it.
  std::vector<std::unique_ptr<Stage>> stages;
  SplitStage* split = nullptr;
  int streaming_end = 0;
  for (int i = 0; i <= last; ++i) {
    const StageSpec& spec = p.stages[static_cast<size_t>(i)];
    if (spec.kind->role != StageRole::kFilter && spec.kind->role != StageRole::kSplit) break;
    StageContext ctx;
    ctx.pipeline = &p;
    ctx.spec = &spec;
    ctx.index = i;
    ctx.canonical = [&stages](std::string& text, int side) {
      for (const auto& s : stages)
        if (!s->rewrite(text, side)) return false;
      return true;
    };
    auto st = make_stage(ctx);
    if (st.ok() && p.named_corpora) st = with_corpus_variants(ctx, std::move(st.value()));
    if (!st.ok()) return st.error();
    stages.push_back(std::move(st.value()));
    if (spec.kind->role == StageRole::kSplit) split = static_cast<SplitStage*>(stages.back().get());
    streaming_end = i + 1;
  }

  // The output directory's lock comes first: opening the input can wait
  // (a pipe, standard input), and a run that waits must not clean up a
  // directory that another run finished in the meantime.
  std::string out_dir = !o.out_dir.empty() ? o.out_dir : p.resolve(p.output_dir);
  auto lock = RunDir::lock(out_dir);
  if (!lock.ok()) return lock.error();

  std::vector<std::vector<std::string>> paths;
  for (const auto& c : p.corpora) {
    paths.emplace_back();
    for (const auto& f : c.files) paths.back().push_back(o.inputs.empty() ? p.resolve(f) : f);
  }
  auto reader = PairReader::open(p.corpora, paths);
  if (!reader.ok()) {
    RunDir::abandon(out_dir, lock.value());
    // Say where a relative path was looked for.
    const Error& e = reader.error();
    for (size_t c = 0; c < paths.size() && o.inputs.empty(); ++c)
      for (size_t i = 0; i < paths[c].size(); ++i)
        if (e.where().file == paths[c][i] && paths[c][i] != p.corpora[c].files[i])
          return Error(e.kind(),
                       e.message() + " (\"" + p.corpora[c].files[i] +
                           "\" is read relative to the pipeline file's folder, " + p.base_dir + ")",
                       e.where());
    return e;
  }

  auto dir = RunDir::prepare(out_dir, o.force, std::move(lock.value()));
  if (!dir.ok()) return dir.error();

  rec.stages.push_back({"read", "read", 0, 0, {}, {}});
  for (int i = 0; i < streaming_end; ++i)
    rec.stages.push_back(
        {p.stages[static_cast<size_t>(i)].name, p.stages[static_cast<size_t>(i)].kind->kind, 0, 0, {}, {}});
  rec.stages.push_back({"output", "output", 0, 0, {}, {}});

  // Over-long lines are not held in memory: the reader streams their bytes
  // into rejected-long.tsv (created at the first one) as it skips them.
  OutputFile longs;
  bool in_long_line = false;
  stream_long_lines(*reader.value(), p, *dir, longs, in_long_line);

  std::vector<std::string> split_names = split ? split->names() : std::vector<std::string>{"train"};
  Pass1Writer writer(*dir, rec, split_names, split, p);
  if (auto st = writer.open(); !st.ok()) {
    writer.discard();
    return st.error();
  }

  int threads = o.threads > 0 ? o.threads : static_cast<int>(std::thread::hardware_concurrency());
  if (threads < 1) threads = 1;
  size_t tokens = static_cast<size_t>(threads) * 4;
  std::vector<std::unique_ptr<PairBatch>> pool;
  tbb::concurrent_bounded_queue<PairBatch*> free_batches;
  for (size_t i = 0; i < tokens; ++i) {
    pool.push_back(std::make_unique<PairBatch>());
    free_batches.push(pool.back().get());
  }

  std::atomic<uint64_t> bytes_read{0}, pairs_read{0};
  Progress progress(o.progress, bytes_read, pairs_read);
  uint64_t seq = 0;
  PairReader& rd = *reader.value();

  auto first =
      tbb::make_filter<void, PairBatch*>(tbb::filter_mode::serial_in_order, [&](tbb::flow_control& fc) -> PairBatch* {
        throw_if_interrupted();
        PairBatch* b = nullptr;
        free_batches.pop(b);
        b->pairs.clear();
        b->raw.clear();
        b->raw_target.clear();
        b->arena.reset();
        auto more = rd.next(*b, o.batch_pairs, 4 << 20);
        if (!more.ok()) {
          free_batches.push(b);
          throw ErrorException{more.error()};
        }
        if (!*more) {
          free_batches.push(b);
          fc.stop();
          return nullptr;
        }
        b->seq = seq++;
        bytes_read = rd.consumed();
        pairs_read += b->pairs.size();
        return b;
      });
  tbb::filter<void, PairBatch*> chain = first;
  for (auto& s : stages) {
    Stage* st = s.get();
    chain = chain & tbb::make_filter<PairBatch*, PairBatch*>(tbb::filter_mode::parallel, [st](PairBatch* b) {
              st->map(*b);
              return b;
            });
    if (st->has_reduce())
      chain = chain & tbb::make_filter<PairBatch*, PairBatch*>(tbb::filter_mode::serial_in_order, [st](PairBatch* b) {
                st->reduce(*b);
                return b;
              });
  }
  // The output check (a field must never break the TSV it is written to) and
  // the lengths for the summary, in parallel; then the writer, in order.
  chain = chain & tbb::make_filter<PairBatch*, PairBatch*>(tbb::filter_mode::parallel, [](PairBatch* b) {
            for (Pair& pr : b->pairs) {
              if (!pr.kept()) continue;
              for (int side = 0; side < 2 && pr.kept(); ++side)
                if (has_tsv_breaker(pr.text[side]))
                  b->drop(pr, kOutputStage, std::string("unsafe-field:") + side_name(side));
              if (!pr.kept()) continue;
              for (size_t side = 0; side < 2; ++side) {
                if (pr.chars[side] == kUnmeasured)
                  pr.chars[side] = static_cast<uint32_t>(count_code_points(pr.text[side]));
                if (pr.words[side] == kUnmeasured) pr.words[side] = static_cast<uint32_t>(count_words(pr.text[side]));
              }
            }
            return b;
          });
  auto last_filter = tbb::make_filter<PairBatch*, void>(tbb::filter_mode::serial_in_order, [&](PairBatch* b) {
    writer.take(*b);
    free_batches.push(b);
    if (auto st = writer.status(); !st.ok()) throw ErrorException{st.error()};
  });

  Status failed;
  try {
    tbb::task_arena arena(threads);
    arena.execute([&] { tbb::parallel_pipeline(tokens, chain & last_filter); });
  } catch (const ErrorException& e) {
    failed = e.error;
  }
  progress.stop();
  if (failed.ok()) {
    for (auto& s : stages)
      if (auto st = s->finish(); !st.ok()) failed = st;
  }
  if (failed.ok()) {
    failed = writer.finish(threads);
  }
  if (failed.ok() && !longs.path().empty()) {
    failed = longs.commit();
    if (failed.ok())
      rec.outputs.push_back({"rejected-long.tsv", "rejected", "", "", longs.records(), longs.size(), longs.checksum()});
  }
  if (!failed.ok()) {
    writer.discard();
    longs.discard();
    return failed.error();
  }
  rec.inputs = rd.inputs();
  for (size_t c = 0; c < rec.corpora.size(); ++c) rec.corpora[c].inputs = rd.inputs(c);
  if (!rec.splits.empty() && rec.splits.front().second == 0)
    return Error(ErrorKind::kData,
                 "no pair is left in the train split after filtering (read " + std::to_string(rec.read) + ", kept " +
                     std::to_string(rec.kept) + "); see rejected.tsv for why, and relax the filters",
                 Location{dir->file("train.tsv"), 0, 0, {}});
  for (size_t i = 0; i < stages.size(); ++i) rec.stages[i + 1].counters = stages[i]->counters();

  // Learning and encoding steps after pass 1.
  StepInput in{&p, &*dir, &rec, last};
  if (auto st = run_steps(in, threads); !st.ok()) return st.error();

  SHEAF_TRY(dir->will_create("manifest.json"));
  OutputFile manifest;
  SHEAF_TRY(manifest.open(dir->file("manifest.json")));
  manifest.write(run_record_json(rec));
  SHEAF_TRY(manifest.commit());
  return rec;
}

}  // namespace sheaf
