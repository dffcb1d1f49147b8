// sheaf: the command line. It only wires commands to the library.
#include <sys/stat.h>
#include <unistd.h>

#include <CLI/CLI.hpp>
#include <algorithm>
#include <csignal>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <new>
#include <optional>
#include <sstream>

#include "pipeline/pipeline.h"
#include "pipeline/runner.h"
#include "pipeline/spread.h"
#include "run/run_record.h"
#include "report/summary.h"
#include "shards/inspect.h"
#include "stages/language.h"
#include "stages/registry.h"
#include "stages/stage.h"
#include "pipeline/tokenizer.h"
#include "subword/codec.h"

namespace {

using namespace sheaf;

int fail(const Error& e) {
  std::fprintf(stderr, "sheaf: %s\n", e.describe().c_str());
  return e.exit_status();
}

void on_signal(int) { interrupt_requested().store(true); }

// SIGINT, SIGTERM, SIGHUP (the terminal went away) and SIGPIPE (the reader of
// our output went away) all stop a run the same way: the flag is set, every
// loop and every read sees it within a second, partial files are removed.
// No SA_RESTART, so a read that waits is interrupted too.
void handle_stop_signals() {
  struct sigaction sa {};
  sa.sa_handler = on_signal;
  sigemptyset(&sa.sa_mask);
  sa.sa_flags = 0;
  for (int sig : {SIGINT, SIGTERM, SIGHUP, SIGPIPE}) ::sigaction(sig, &sa, nullptr);
}

// Reads a whole small file; false when it cannot be read.
bool read_text(const std::string& path, std::string& out) {
  std::ifstream in(path, std::ios::binary);
  if (!in) return false;
  std::stringstream text;
  text << in.rdbuf();
  out = text.str();
  return !in.bad();
}

// The subcommands, for "unknown command" (CLI11 would only say that one is
// required).
const std::vector<std::string> kCommands = {"init", "validate", "run", "spread", "encode", "decode", "inspect", "stats"};

// init: the values it is given must make a file that loads; the same checks
// as validate and run, with the option named.
Status check_init(const InitOptions& io) {
  const StageKind* vocab = find_stage_kind("vocabulary");
  for (const auto& f : vocab->fields)
    if (f.key == "size" && !(static_cast<double>(io.vocab_size) >= f.min && static_cast<double>(io.vocab_size) <= f.max))
      return Error(ErrorKind::kUsage, "--vocab-size must be from " + std::to_string(static_cast<int64_t>(f.min)) +
                                          " to " + std::to_string(static_cast<int64_t>(f.max)) + " (4 special + 256 byte tokens + at least one more), not " +
                                          std::to_string(io.vocab_size));
  if (io.seed < 0) return Error(ErrorKind::kUsage, "--seed must not be negative");
  // A language must be a code CLD2 knows (as the language stage checks).
  for (const auto& [option, code] : {std::pair<const char*, const std::string&>{"--from", io.source_lang},
                                     std::pair<const char*, const std::string&>{"--to", io.target_lang}})
    if (!cld2_knows(code.substr(0, code.find_first_of("-_"))))
      return Error(ErrorKind::kUsage, std::string(option) + " is \"" + code +
                                          "\", which is not a language code; give an ISO 639-1 code such as \"en\"");
  // Then the checks of validate and run, on the very file init would print.
  auto p = load_pipeline_text(init_template(io), "init");
  if (!p.ok()) return Error(ErrorKind::kUsage, "the file init would write does not load: " + p.error().message());
  Status st = check_stages(*p);
  if (!st.ok())
    return Error(ErrorKind::kUsage,
                 "the file init would write does not pass validate: " + st.error().message() +
                     "; run init with a language sheaf knows and edit [corpus] and that stage by hand");
  return {};
}

void print_summary(const std::string& out_dir) {
  std::ifstream in(out_dir + "/summary.json");
  std::stringstream text;
  text << in.rdbuf();
  auto s = summary_text(text.str());
  if (s.ok()) std::cout << *s;
  std::cout << "outputs in " << out_dir << " (run record: manifest.json, report: report.html)\n";
}

}  // namespace

int run_command(int argc, char** argv);

int main(int argc, char** argv) {
  // An unknown first word is a mistyped command, not a missing one.
  if (argc > 1 && argv[1][0] != '-' &&
      std::find(kCommands.begin(), kCommands.end(), std::string(argv[1])) == kCommands.end()) {
    std::string hint = closest_name(argv[1], kCommands);
    std::string all;
    for (const auto& c : kCommands) all += (all.empty() ? "" : ", ") + c;
    return fail(Error(ErrorKind::kUsage, std::string("unknown command \"") + argv[1] + "\"" +
                                             (hint.empty() ? "" : " (did you mean \"" + hint + "\"?)") +
                                             "; the commands are " + all + " (sheaf --help)"));
  }
  try {
    return run_command(argc, argv);
  } catch (const ErrorException& e) {
    // An error value raised where no oneTBB filter was there to catch it
    // (e.g. ICU's word iterator failing during encode).
    return fail(e.error);
  } catch (const std::bad_alloc&) {
    // Destructors have removed every partial file on the way here.
    return fail(Error(ErrorKind::kIo,
                      "out of memory; partial files were removed and no run record was written: lower --threads, "
                      "or raise the memory limit (ulimit -v)"));
  } catch (const std::exception& e) {
    // oneTBB reports a thread it could not start (under a memory limit, the
    // thread's stack) as a runtime_error naming pthread_create.
    if (std::string_view(e.what()).find("pthread_create") != std::string_view::npos)
      return fail(Error(ErrorKind::kIo, std::string("out of memory: a worker thread could not be started (") + e.what() +
                                            "); partial files were removed and no run record was written: lower "
                                            "--threads, or raise the memory limit (ulimit -v)"));
    return fail(Error(ErrorKind::kInternal, std::string("internal error (") + e.what() +
                                                "); partial files were removed; please report this"));
  }
}

int run_command(int argc, char** argv) {
  CLI::App app{"sheaf: prepares parallel corpora for sequence-to-sequence training"};
  app.require_subcommand(1);
  app.set_version_flag("--version", std::string("sheaf ") + SHEAF_VERSION);

  // init
  auto* init = app.add_subcommand("init", "print a complete pipeline file for a corpus");
  InitOptions io;
  init->add_option("--input", io.inputs, "corpus file; give it twice for two line-aligned files");
  init->add_option("--corpus", io.corpora,
                   "a named corpus, NAME=FILE or NAME=SOURCE_FILE,TARGET_FILE; repeat it, highest priority first");
  init->add_flag("--near-dup", io.near_dup, "also write the near-duplicate stage");
  init->add_option("--from", io.source_lang, "ISO 639-1 code of the source side")->required();
  init->add_option("--to", io.target_lang, "ISO 639-1 code of the target side")->required();
  init->add_option("--vocab-size", io.vocab_size, "subword vocabulary size")->capture_default_str();
  init->add_option("--seed", io.seed, "seed of the split")->capture_default_str();
  init->add_option("--out", io.out_dir, "output directory")->capture_default_str();

  // validate
  auto* validate = app.add_subcommand("validate", "check a pipeline file and print it with defaults filled in");
  std::string vfile;
  std::vector<std::string> vsets;
  validate->add_option("file", vfile, "pipeline file")->required();
  validate->add_option("--set", vsets, "override a key: NAME.KEY=VALUE (VALUE in TOML)");

  // run
  auto* run = app.add_subcommand("run", "run a pipeline");
  std::string rfile;
  std::vector<std::string> rsets;
  RunOptions ro;
  bool quiet = false;
  run->add_option("file", rfile, "pipeline file")->required();
  run->add_option("--out", ro.out_dir, "output directory (overrides [output].dir)");
  run->add_option("--input", ro.inputs, "corpus file(s) (override [corpus].files)");
  run->add_option("--threads", ro.threads, "worker threads (default: all cores)")->check(CLI::Range(1, 1024));
  run->add_option("--until", ro.until, "stop after this stage; outputs so far are complete and recorded");
  run->add_option("--set", rsets, "override a key: NAME.KEY=VALUE (VALUE in TOML)");
  run->add_flag("--force", ro.force, "write into a directory that is not a sheaf run");
  run->add_flag("--quiet", quiet, "no progress and no summary");

  // spread: the same run as jobs sharing a file system (docs/cluster.md)
  auto* spread = app.add_subcommand("spread", "the same run cut into jobs: on this machine, or on a Slurm cluster");
  spread->require_subcommand(1);
  std::string sp_file, sp_work, sp_out;
  std::vector<std::string> sp_sets, sp_sbatch;
  int sp_parts = 0, sp_threads = 0, sp_jobs = 0, sp_buckets = -1;
  uint64_t sp_job_mib = 2048;
  size_t sp_part = 0, sp_bucket_no = 0;
  bool sp_force = false, sp_quiet = false, sp_submit = false;
  auto planned = [&](CLI::App* c) {
    c->add_option("file", sp_file, "pipeline file")->required();
    c->add_option("--parts", sp_parts, "about how many parts to cut the input into")->required()->check(
        CLI::Range(1, 100000));
    c->add_option("--work", sp_work, "work directory the jobs share (plan, parts, logs)")->required();
    c->add_option("--set", sp_sets, "override a key: NAME.KEY=VALUE (VALUE in TOML)");
    c->add_option("--buckets", sp_buckets,
                  "bucket jobs that deduplicate by key, at most 1000 (default: enough for --job-memory; 0: the "
                  "reduce job does it)")
        ->check(CLI::Range(0, static_cast<int>(kMaxBuckets)));
    c->add_option("--job-memory", sp_job_mib, "MiB a bucket job may use; sets --buckets when it is not given")
        ->capture_default_str()
        ->check(CLI::Range(32, 1 << 24));
  };
  auto* sp_plan = spread->add_subcommand("plan", "cut the input into parts at line ends and write WORK/plan.json");
  planned(sp_plan);
  auto* sp_map = spread->add_subcommand("map", "run one map job: part K of a plan");
  sp_map->add_option("work", sp_work, "work directory")->required();
  sp_map->add_option("--part", sp_part, "the part, from 0")->required();
  sp_map->add_option("--threads", sp_threads, "worker threads (default: all cores)")->check(CLI::Range(1, 1024));
  auto* sp_bucket = spread->add_subcommand("bucket", "run one bucket job: the first pair of each key in bucket J");
  sp_bucket->add_option("work", sp_work, "work directory")->required();
  sp_bucket->add_option("--bucket", sp_bucket_no, "the bucket, from 0")->required();
  auto* sp_reduce = spread->add_subcommand("reduce", "run the reduce job: the rest of the run from the parts");
  sp_reduce->add_option("work", sp_work, "work directory")->required();
  auto reduce_opts = [&](CLI::App* c) {
    c->add_option("--out", sp_out, "output directory (overrides [output].dir)");
    c->add_option("--threads", sp_threads, "worker threads per job (default: all cores)")->check(CLI::Range(1, 1024));
    c->add_flag("--force", sp_force, "write into a directory that is not a sheaf run");
    c->add_flag("--quiet", sp_quiet, "no summary");
  };
  reduce_opts(sp_reduce);
  auto* sp_local = spread->add_subcommand("local", "plan, run the map jobs as processes here, then reduce");
  planned(sp_local);
  reduce_opts(sp_local);
  sp_local->add_option("--jobs", sp_jobs, "map or bucket jobs at a time (default: 1)")->check(CLI::Range(1, 1024));
  auto* sp_slurm = spread->add_subcommand("slurm", "plan, and write Slurm job scripts (submit them with --submit)");
  planned(sp_slurm);
  sp_slurm->add_option("--out", sp_out, "output directory of the reduce job (overrides [output].dir)");
  sp_slurm->add_option("--threads", sp_threads, "CPUs per job (default: 2)")->check(CLI::Range(1, 1024));
  sp_slurm->add_option("--sbatch", sp_sbatch, "a line for both scripts' #SBATCH header, e.g. \"--partition=long\"");
  sp_slurm->add_flag("--submit", sp_submit, "submit the jobs with sbatch, chained by dependency");
  auto* sp_status = spread->add_subcommand("status", "say which map and bucket jobs of a plan are done");
  sp_status->add_option("work", sp_work, "work directory")->required();

  // encode
  auto* encode = app.add_subcommand("encode", "text lines on standard input to token ids on standard output");
  std::string evocab, erun, epipeline, eside = "source";
  bool show_tokens = false, ebos = false, eeos = false;
  auto* evocab_opt = encode->add_option("--vocab", evocab, "vocabulary file");
  auto* erun_opt = encode->add_option(
      "--run", erun, "a run directory: its vocabulary, and its pipeline's text rules applied before encoding");
  encode->add_option("--pipeline", epipeline, "with --vocab: apply this pipeline file's text rules before encoding")
      ->needs(evocab_opt);
  encode->add_option("--side", eside, "which side's text rules (and, with --run, vocabulary) apply")
      ->check(CLI::IsMember({"source", "target"}))
      ->capture_default_str();
  evocab_opt->excludes(erun_opt);
  encode->add_flag("--tokens", show_tokens, "print the escaped tokens instead of ids");
  encode->add_flag("--bos", ebos, "begin each line with the begin-of-sequence id");
  encode->add_flag("--eos", eeos, "end each line with the end-of-sequence id");

  // decode
  auto* decode_cmd = app.add_subcommand("decode", "token ids (standard input; each line up to its end-of-sequence id) or a shard back to text");
  std::vector<std::string> dvocab;
  std::string dshard;
  decode_cmd->add_option("shard", dshard, "a shard file to print as TSV (omit to read ids from standard input)");
  decode_cmd->add_option(
      "--vocab", dvocab,
      "vocabulary file; for a shard: one shared or two (source, target), found beside it if omitted");

  // inspect
  auto* inspect = app.add_subcommand("inspect", "check a shard, or every file of a run, and print what it holds");
  std::string ipath;
  inspect->add_option("path", ipath, "a shard file or a run directory")->required();

  // stats
  auto* stats = app.add_subcommand("stats", "print the summary of a finished run again");
  std::string sdir;
  bool sjson = false;
  stats->add_option("run_dir", sdir, "a run directory")->required();
  stats->add_flag("--json", sjson, "print summary.json as it is");

  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    int rc = app.exit(e);
    return rc == 0 ? 0 : 2;
  }

  auto overrides = [](const std::vector<std::string>& sets) -> Result<std::vector<Override>> {
    std::vector<Override> out;
    for (const auto& s : sets) {
      auto o = parse_override(s);
      if (!o.ok()) return o.error();
      out.push_back(o.value());
    }
    return out;
  };

  if (init->parsed()) {
    if (auto st = check_init_options(io); !st.ok()) return fail(st.error());
    if (auto st = check_init(io); !st.ok()) return fail(st.error());
    std::cout << init_template(io);
    return 0;
  }
  if (validate->parsed()) {
    auto ov = overrides(vsets);
    if (!ov.ok()) return fail(ov.error());
    auto p = load_pipeline(vfile, *ov);
    if (!p.ok()) return fail(p.error());
    if (auto st = check_stages(*p); !st.ok()) return fail(st.error());
    std::cout << render_pipeline(*p);
    return 0;
  }
  if (encode->parsed()) {
    if (evocab.empty() && erun.empty()) return fail(Error(ErrorKind::kUsage, "encode needs --vocab FILE or --run DIR"));
    // The cache is sized for the input: a file's size, or 1 MiB for a pipe
    // (a large cache costs the time to clear it, even for one line).
    struct stat st {};
    uint64_t input_bytes =
        ::fstat(STDIN_FILENO, &st) == 0 && S_ISREG(st.st_mode) ? static_cast<uint64_t>(st.st_size) : 0;
    uint64_t cache_bytes = input_bytes > 0 ? input_bytes : uint64_t{1} << 20;
    int side = eside == "target" ? 1 : 0;
    // Without a pipeline the text is encoded as it comes; with one (--run,
    // or --vocab with --pipeline) through its text rules first.
    std::unique_ptr<Tokenizer> tok;
    std::optional<Vocabulary> plain_vocab;
    std::optional<Encoder> plain_enc;
    if (!erun.empty() || !epipeline.empty()) {
      auto t = erun.empty() ? Tokenizer::from_files(evocab, epipeline, side, cache_bytes)
                            : Tokenizer::from_run(erun, side, cache_bytes);
      if (!t.ok()) return fail(t.error());
      tok = std::move(t.value());
    } else {
      auto v = Vocabulary::load(evocab);
      if (!v.ok()) return fail(v.error());
      plain_vocab.emplace(std::move(v.value()));
      plain_enc.emplace(*plain_vocab, SIZE_MAX, cache_bytes);
    }
    const Vocabulary& v = tok ? tok->vocabulary() : *plain_vocab;
    std::string line, out;
    std::vector<uint32_t> ids;
    while (std::getline(std::cin, line)) {
      ids.clear();
      if (tok) {
        tok->encode(line, ebos, eeos, -1, ids);
      } else {
        if (ebos) ids.push_back(v.special(kBos));
        plain_enc->encode(line, ids);
        if (eeos) ids.push_back(v.special(kEos));
      }
      out.clear();
      for (size_t i = 0; i < ids.size(); ++i) {
        if (i) out += ' ';
        out += show_tokens ? escape_token(v.token(ids[i]).bytes) : std::to_string(ids[i]);
      }
      out += '\n';
      std::cout << out;
    }
    return 0;
  }
  if (decode_cmd->parsed()) {
    if (!dshard.empty()) {
      auto vs = vocabularies_for_shard(dshard, dvocab);
      if (!vs.ok()) return fail(vs.error());
      if (auto st = decode_shard(dshard, *vs, std::cout); !st.ok()) return fail(st.error());
      return 0;
    }
    if (dvocab.size() != 1) return fail(Error(ErrorKind::kUsage, "decode of ids needs exactly one --vocab FILE"));
    auto v = Vocabulary::load(dvocab[0]);
    if (!v.ok()) return fail(v.error());
    std::string line;
    uint64_t n = 0;
    std::vector<uint32_t> ids;
    while (std::getline(std::cin, line)) {
      ++n;
      ids.clear();
      std::istringstream in(line);
      std::string tok;
      while (in >> tok) {
        char* end = nullptr;
        unsigned long id = std::strtoul(tok.c_str(), &end, 10);
        if (*end != 0 || id >= v->size())
          return fail(
              Error(ErrorKind::kInput,
                    "\"" + tok + "\" is not a token id of this vocabulary (0 to " + std::to_string(v->size() - 1) + ")",
                    Location{"<stdin>", n, 0, {}}));
        ids.push_back(static_cast<uint32_t>(id));
      }
      // A model's output ends at its first end-of-sequence id; what follows
      // is not text.
      auto eos = std::find(ids.begin(), ids.end(), v->special(kEos));
      ids.erase(eos, ids.end());
      std::cout << decode(*v, ids) << '\n';
    }
    return 0;
  }
  if (stats->parsed()) {
    // Both files are checked: a damaged or foreign record is an error.
    auto record = read_manifest_outputs(sdir + "/manifest.json");
    if (!record.ok()) {
      Error e = record.error();
      return fail(Error(ErrorKind::kInput, e.message() + "; not a finished sheaf run directory", e.where()));
    }
    std::string text;
    if (!read_text(sdir + "/summary.json", text))
      return fail(
          Error(ErrorKind::kInput, "no summary.json: not a finished sheaf run directory", Location{sdir, 0, 0, {}}));
    auto s = summary_text(text);
    if (!s.ok()) return fail(Error(s.error().kind(), s.error().message(), Location{sdir + "/summary.json", 0, 0, {}}));
    if (sjson) {
      std::cout << text;
      return 0;
    }
    std::cout << *s;
    return 0;
  }
  if (inspect->parsed()) {
    std::error_code ec;
    Status st =
        std::filesystem::is_directory(ipath, ec) ? inspect_run(ipath, std::cout) : inspect_shard(ipath, std::cout);
    if (!st.ok()) return fail(st.error());
    return 0;
  }
  if (spread->parsed()) {
    handle_stop_signals();
    std::signal(SIGXFSZ, SIG_IGN);
    std::error_code ec;
    std::string self = std::filesystem::read_symlink("/proc/self/exe", ec).string();
    // Jobs work in the plan's directory; paths given here are made absolute.
    if (!sp_work.empty()) sp_work = std::filesystem::absolute(sp_work, ec).lexically_normal().string();
    if (!sp_out.empty()) sp_out = std::filesystem::absolute(sp_out, ec).lexically_normal().string();
    if (sp_plan->parsed() || sp_local->parsed() || sp_slurm->parsed()) {
      auto plan = spread_plan(sp_file, sp_sets, sp_parts, sp_work, sp_buckets, sp_job_mib);
      if (!plan.ok()) return fail(plan.error());
      if (sp_plan->parsed()) {
        std::cout << "planned " << plan->parts.size() << " parts and " << plan->buckets << " buckets in " << sp_work
                  << "/plan.json\n";
        return 0;
      }
    }
    if (sp_map->parsed()) {
      if (auto st = spread_map(sp_work, sp_part, sp_threads); !st.ok()) return fail(st.error());
      return 0;
    }
    if (sp_bucket->parsed()) {
      if (auto st = spread_bucket(sp_work, sp_bucket_no); !st.ok()) return fail(st.error());
      return 0;
    }
    if (sp_status->parsed()) {
      auto s = spread_status(sp_work);
      if (!s.ok()) return fail(s.error());
      std::cout << (s->parts - s->missing.size()) << " of " << s->parts << " parts done";
      if (!s->missing.empty()) {
        std::cout << "; not done:";
        for (size_t k : s->missing) std::cout << ' ' << k;
      }
      std::cout << "\n";
      if (s->buckets > 0) {
        std::cout << (s->buckets - s->missing_buckets.size()) << " of " << s->buckets << " buckets done";
        if (!s->missing_buckets.empty()) {
          std::cout << "; not done:";
          for (size_t b : s->missing_buckets) std::cout << ' ' << b;
        }
        std::cout << "\n";
      }
      return s->missing.empty() && s->missing_buckets.empty() ? 0 : 1;
    }
    if (sp_slurm->parsed()) {
      auto cmds = spread_slurm(self, sp_work, sp_threads > 0 ? sp_threads : 2, sp_sbatch, sp_out, sp_submit);
      if (!cmds.ok()) return fail(cmds.error());
      if (sp_submit)
        std::cout << "submitted " << sp_work << " to Slurm; " << *cmds;
      else
        std::cout << "job scripts written to " << sp_work << "; submit them with:\n" << *cmds;
      return 0;
    }
    if (sp_local->parsed()) {
      if (auto st = spread_run_maps(self, sp_work, sp_jobs > 0 ? sp_jobs : 1, sp_threads); !st.ok())
        return fail(st.error());
      if (auto st = spread_run_buckets(self, sp_work, sp_jobs > 0 ? sp_jobs : 1); !st.ok()) return fail(st.error());
    }
    RunOptions so;
    so.out_dir = sp_out;
    so.threads = sp_threads;
    so.force = sp_force;
    so.closing_steps.push_back(make_summary_step);
    auto rec = spread_reduce(sp_work, so);
    if (!rec.ok()) return fail(rec.error());
    if (!sp_quiet) {
      auto plan = read_spread_plan(sp_work);
      auto ov = plan.ok() ? overrides(plan->sets) : Result<std::vector<Override>>(plan.error());
      auto p = ov.ok() ? load_pipeline(plan->pipeline, *ov) : Result<Pipeline>(ov.error());
      if (!sp_out.empty())
        print_summary(sp_out);
      else if (p.ok())
        print_summary(p->resolve(p->output_dir));
    }
    return 0;
  }
  if (run->parsed()) {
    auto ov = overrides(rsets);
    if (!ov.ok()) return fail(ov.error());
    auto p = load_pipeline(rfile, *ov);
    if (!p.ok()) return fail(p.error());
    handle_stop_signals();
    // A file-size limit (ulimit -f) must surface as a write error, not kill us.
    std::signal(SIGXFSZ, SIG_IGN);
    ro.progress = !quiet && ::isatty(STDERR_FILENO);
    ro.closing_steps.push_back(make_summary_step);
    auto rec = run_pipeline(*p, ro);
    if (!rec.ok()) return fail(rec.error());
    if (!quiet) print_summary(ro.out_dir.empty() ? p->resolve(p->output_dir) : ro.out_dir);
    return 0;
  }
  return 2;
}
