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
#include <optional>
#include <sstream>

#include "pipeline/pipeline.h"
#include "pipeline/runner.h"
#include "report/run_record.h"
#include "report/summary.h"
#include "shards/inspect.h"
#include "stages/tokenizer.h"
#include "subword/codec.h"

namespace {

using namespace sheaf;

int fail(const Error& e) {
  std::fprintf(stderr, "sheaf: %s\n", e.describe().c_str());
  return e.exit_status();
}

void on_signal(int) { interrupt_requested().store(true); }

void print_summary(const std::string& out_dir) {
  std::ifstream in(out_dir + "/summary.json");
  std::stringstream text;
  text << in.rdbuf();
  auto s = summary_text(text.str());
  if (s.ok()) std::cout << *s;
  std::cout << "outputs in " << out_dir << " (run record: manifest.json, report: report.html)\n";
}

}  // namespace

int main(int argc, char** argv) {
  CLI::App app{"sheaf: prepares parallel corpora for sequence-to-sequence training"};
  app.require_subcommand(1);
  app.set_version_flag("--version", std::string("sheaf ") + SHEAF_VERSION);

  // init
  auto* init = app.add_subcommand("init", "print a complete pipeline file for a corpus");
  InitOptions io;
  init->add_option("--input", io.inputs, "corpus file; give it twice for two line-aligned files")->required();
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
    if (io.inputs.size() > 2)
      return fail(Error(ErrorKind::kUsage, "--input takes one file, or two line-aligned files"));
    std::cout << init_template(io);
    return 0;
  }
  if (validate->parsed()) {
    auto ov = overrides(vsets);
    if (!ov.ok()) return fail(ov.error());
    auto p = load_pipeline(vfile, *ov);
    if (!p.ok()) return fail(p.error());
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
    std::ifstream in(sdir + "/summary.json");
    if (!in)
      return fail(
          Error(ErrorKind::kInput, "no summary.json: not a finished sheaf run directory", Location{sdir, 0, 0, {}}));
    std::stringstream text;
    text << in.rdbuf();
    if (sjson) {
      std::cout << text.str();
      return 0;
    }
    auto s = summary_text(text.str());
    if (!s.ok()) return fail(s.error());
    std::cout << *s;
    return 0;
  }
  if (inspect->parsed()) {
    Status st = std::filesystem::is_directory(ipath) ? inspect_run(ipath, std::cout) : inspect_shard(ipath, std::cout);
    if (!st.ok()) return fail(st.error());
    return 0;
  }
  if (run->parsed()) {
    auto ov = overrides(rsets);
    if (!ov.ok()) return fail(ov.error());
    auto p = load_pipeline(rfile, *ov);
    if (!p.ok()) return fail(p.error());
    std::signal(SIGINT, on_signal);
    std::signal(SIGTERM, on_signal);
    // A file-size limit (ulimit -f) must surface as a write error, not kill us.
    std::signal(SIGXFSZ, SIG_IGN);
    ro.progress = !quiet && ::isatty(STDERR_FILENO);
    auto rec = run_pipeline(*p, ro);
    if (!rec.ok()) return fail(rec.error());
    if (!quiet) print_summary(ro.out_dir.empty() ? p->resolve(p->output_dir) : ro.out_dir);
    return 0;
  }
  return 2;
}
