#include "pipeline/runner.h"

#include <oneapi/tbb/parallel_pipeline.h>
#include <oneapi/tbb/task_arena.h>
#include <xxhash.h>

#include <algorithm>
#include <memory>
#include <thread>

#ifdef __GLIBC__
#include <malloc.h>  // malloc_trim
#endif

#include "core/batch_pool.h"
#include "core/interrupt.h"
#include "core/text.h"
#include "core/tsan.h"
#include "io/output_file.h"
#include "io/pair_reader.h"
#include "pipeline/pass1_writer.h"
#include "pipeline/progress.h"
#include "run/run_dir.h"
#include "run/step.h"
#include "stages/per_corpus.h"
#include "stages/registry.h"
#include "stages/stage.h"

namespace sheaf {

namespace {

// True when `s` holds a tab, CR or LF (which would break a TSV row).
bool has_tsv_breaker(std::string_view s) {
  for (char c : s)
    if (static_cast<unsigned char>(c) <= '\r' && (c == '\t' || c == '\n' || c == '\r')) return true;
  return false;
}

// Streams the bytes of over-long lines into rejected-long.tsv: per line
// "LINE<TAB>SIDE<TAB>" then its bytes then LF (a line holds no LF); LINE is
// "CORPUS:LINE" with named corpora, as in rejected.tsv.
void stream_long_lines(BatchSource& rd, const Pipeline& p, const RunDir& dir, OutputFile& longs, bool& in_line) {
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

Status stream_pass(const StreamPass& ps) {
  int threads = ps.threads < 1 ? 1 : ps.threads;
  BatchPool<PairBatch> pool(static_cast<size_t>(threads) * std::max<size_t>(ps.batches_per_thread, 1));
  uint64_t seq = 0;
  BatchSource& rd = *ps.source;
  auto first =
      tbb::make_filter<void, PairBatch*>(tbb::filter_mode::serial_in_order, [&](tbb::flow_control& fc) -> PairBatch* {
        TaskBody body;
        SerialTurn turn(&rd);
        throw_if_interrupted();
        PairBatch* b = pool.acquire();
        b->pairs.clear();
        b->raw.clear();
        b->raw_target.clear();
        b->arena.reset();
        auto more = rd.next(*b, ps.batch_pairs, ps.batch_bytes);
        if (!more.ok()) {
          pool.release(b);
          throw ErrorException{more.error()};
        }
        if (!*more) {
          pool.release(b);
          fc.stop();
          return nullptr;
        }
        b->seq = seq++;
        if (ps.bytes_read) *ps.bytes_read = rd.consumed();
        if (ps.pairs_read) *ps.pairs_read += b->pairs.size();
        handoff_release(b);
        return b;
      });
  tbb::filter<void, PairBatch*> chain = first;
  for (Stage* st : ps.stages) {
    chain = chain & tbb::make_filter<PairBatch*, PairBatch*>(tbb::filter_mode::parallel, [st](PairBatch* b) {
              TaskBody body;
              handoff_acquire(b);
              st->map(*b);
              handoff_release(b);
              return b;
            });
    if (st->has_reduce())
      chain = chain & tbb::make_filter<PairBatch*, PairBatch*>(tbb::filter_mode::serial_in_order, [st](PairBatch* b) {
                TaskBody body;
                SerialTurn turn(st);
                handoff_acquire(b);
                st->reduce(*b);
                handoff_release(b);
                return b;
              });
  }
  // The output check (a field must never break the TSV it is written to) and
  // the lengths for the summary, in parallel; then the taker, in order.
  if (ps.output_check)
    chain = chain & tbb::make_filter<PairBatch*, PairBatch*>(tbb::filter_mode::parallel, [](PairBatch* b) {
              TaskBody body;
              handoff_acquire(b);
              for (Pair& pr : b->pairs) {
                if (!pr.kept()) continue;
                for (int side = 0; side < 2 && pr.kept(); ++side)
                  if (has_tsv_breaker(pr.text[side]))
                    b->drop(pr, kOutputStage, std::string("unsafe-field:") + side_name(side));
                if (!pr.kept()) continue;
                for (size_t side = 0; side < 2; ++side) {
                  if (pr.chars[side] == kUnmeasured)
                    pr.chars[side] = static_cast<uint32_t>(count_code_points(pr.text[side]));
                  if (pr.words[side] == kUnmeasured)
                    pr.words[side] = static_cast<uint32_t>(count_words(pr.text[side]));
                }
              }
              handoff_release(b);
              return b;
            });
  const auto& take = ps.take;
  auto last_filter = tbb::make_filter<PairBatch*, void>(tbb::filter_mode::serial_in_order, [&](PairBatch* b) {
    TaskBody body;
    SerialTurn turn(&take);
    handoff_acquire(b);
    Status st = take(*b);
    pool.release(b);
    if (!st.ok()) throw ErrorException{st.error()};
  });
  try {
    tbb::task_arena arena(threads);
    arena.execute([&] { pool.run_pipeline(chain & last_filter); });
  } catch (const ErrorException& e) {
    return e.error;
  }
  return {};
}

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

  // Build every stage and step once, before anything is read or written
  // (the same checks as validate, check_stages): the streaming stages, each
  // knowing only the rewrites before it, then the steps. Those after
  // --until are built only to be checked.
  auto built = build_streaming_stages(p);
  if (!built.ok()) return built.error();
  std::vector<std::unique_ptr<Stage>> stages = std::move(built.value());
  const SplitRouter* split = nullptr;
  int streaming_end = 0;
  const int first_step = static_cast<int>(stages.size());  // index of the first step in p.stages
  std::vector<std::unique_ptr<Step>> steps;
  for (size_t i = stages.size(); i < p.stages.size(); ++i) {
    auto step = make_step(p, p.stages[i]);
    if (!step.ok()) return step.error();
    steps.push_back(std::move(step.value()));
  }
  streaming_end = std::min(first_step, last + 1);
  stages.resize(static_cast<size_t>(streaming_end));
  steps.resize(static_cast<size_t>(std::max(0, last + 1 - first_step)));
  for (const auto& st : stages)
    if (st->router() != nullptr) split = st->router();

  // The output directory's lock comes first: opening the input can wait
  // (a pipe, standard input), and a run that waits must not clean up a
  // directory that another run finished in the meantime.
  std::string out_dir = !o.out_dir.empty() ? o.out_dir : p.resolve(p.output_dir);
  auto lock = RunDir::lock(out_dir);
  if (!lock.ok()) return lock.error();

  std::unique_ptr<BatchSource> source;
  if (o.source) {
    auto made = o.source(p);
    if (!made.ok()) {
      RunDir::abandon(out_dir, lock.value());
      return made.error();
    }
    source = std::move(made.value());
  } else {
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
    source = std::make_unique<ReaderSource>(std::move(reader.value()));
  }
  const size_t from = std::min(source->first_stage(), static_cast<size_t>(streaming_end));

  auto dir = RunDir::prepare(out_dir, o.force, std::move(lock.value()));
  if (!dir.ok()) return dir.error();

  rec.stages.push_back({"read", "read", 0, 0, {}, {}});
  for (int i = 0; i < streaming_end; ++i)
    rec.stages.push_back(
        {p.stages[static_cast<size_t>(i)].name, p.stages[static_cast<size_t>(i)].kind->kind, 0, 0, {}, {}});
  rec.stages.push_back({"output", "output", 0, 0, {}, {}});
  // Every corpus lists every stage, also a corpus with no pair.
  for (auto& c : rec.corpora) c.stage_out.assign(rec.stages.size(), 0);

  // Over-long lines are not held in memory: the reader streams their bytes
  // into rejected-long.tsv (created at the first one) as it skips them.
  OutputFile longs;
  bool in_long_line = false;
  stream_long_lines(*source, p, *dir, longs, in_long_line);

  std::vector<std::string> split_names = split ? split->names() : std::vector<std::string>{"train"};
  Pass1Writer writer(*dir, rec, split_names, split, p);
  if (auto st = writer.open(); !st.ok()) {
    writer.discard();
    return st.error();
  }

  int threads = o.threads > 0 ? o.threads : static_cast<int>(std::thread::hardware_concurrency());
  if (threads < 1) threads = 1;
  std::atomic<uint64_t> bytes_read{0}, pairs_read{0};
  Progress progress(o.progress, bytes_read, pairs_read);
  StreamPass pass;
  pass.source = source.get();
  for (size_t i = from; i < stages.size(); ++i) pass.stages.push_back(stages[i].get());
  pass.take = [&writer](PairBatch& b) {
    writer.take(b);
    return writer.status();
  };
  pass.threads = threads;
  pass.batch_pairs = o.batch_pairs;
  pass.batch_bytes = o.batch_bytes;
  pass.batches_per_thread = o.batches_per_thread;
  pass.bytes_read = &bytes_read;
  pass.pairs_read = &pairs_read;
  Status failed = stream_pass(pass);
  progress.stop();
  if (failed.ok()) {
    for (size_t i = from; i < stages.size() && failed.ok(); ++i)
      if (auto st = stages[i]->finish(); !st.ok()) failed = st;
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
  for (size_t c = 0; c < p.corpora.size(); ++c) {
    auto in = source->inputs(c);
    if (!in.ok()) {
      writer.discard();
      return in.error();
    }
    for (const auto& i : *in) rec.inputs.push_back(i);
    if (c < rec.corpora.size()) rec.corpora[c].inputs = *in;
  }
  if (!rec.splits.empty() && rec.splits.front().second == 0) {
    SHEAF_TRY(writer.close());
    return Error(ErrorKind::kData,
                 "no pair is left in the train split after filtering (read " + std::to_string(rec.read) + ", kept " +
                     std::to_string(rec.kept) + "); see rejected.tsv for why, and relax the filters",
                 Location{dir->file("train.tsv"), 0, 0, {}});
  }
  for (size_t i = 0; i < stages.size(); ++i)
    rec.stages[i + 1].counters = i < from ? source->counters(i) : stages[i]->counters();
  // Pass 1 is over: the stages' tables (dedup, near-dup) and the source are
  // freed before the steps, which may need much memory of their own. The
  // split stage stays: pass 1's writer routes and checks with it.
  source.reset();
  for (auto& st : stages)
    if (!st->router()) st.reset();

  // The steps after pass 1, in pipeline order (the loader checked that each
  // comes after what it needs), then the closing steps the caller gave.
  // rejected.tsv is committed after them (a step may add rows to it). The
  // rows of a step that fails are taken back out: the file then holds those
  // of pass 1 and of the steps that completed, never a failed step's part.
  Products products;
  products.put(kPass1Product, static_cast<Pass1Output*>(&writer));
  StepContext ctx{&p, nullptr, &*dir, &rec, &products, threads};
  Status stepped;
  for (size_t k = 0; k < steps.size() && stepped.ok(); ++k) {
    ctx.spec = &p.stages[static_cast<size_t>(first_step) + k];
#ifdef __GLIBC__
    // Give the memory that pass 1 and the steps before freed back to the
    // system before a step that may need much of its own (the learner):
    // glibc keeps freed blocks for reuse, which the next step's different
    // sizes seldom fit. 75 MiB less peak on the 200 MB full pipeline
    // (docs/performance.md).
    malloc_trim(0);
#endif
    stepped = steps[k]->run(ctx);
    if (stepped.ok()) writer.keep_rows();
  }
  Status closed = writer.close(/*take_back=*/!stepped.ok());
  if (!stepped.ok()) return stepped.error();
  if (!closed.ok()) return closed.error();
  products.drop(kPass1Product);
  ctx.spec = nullptr;
  for (const auto& make : o.closing_steps) SHEAF_TRY(make()->run(ctx));

  SHEAF_TRY(dir->will_create("manifest.json"));
  OutputFile manifest;
  SHEAF_TRY(manifest.open(dir->file("manifest.json")));
  manifest.write(run_record_json(rec));
  SHEAF_TRY(manifest.commit());
  return rec;
}

}  // namespace sheaf
