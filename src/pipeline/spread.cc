#include "pipeline/spread.h"

#include <fcntl.h>
#include <signal.h>
#include <spawn.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>
#include <xxhash.h>

#include <nlohmann/json.hpp>

#include <algorithm>
#include <array>
#include <bit>
#include <cerrno>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <functional>
#include <memory>
#include <optional>
#include <queue>
#include <sstream>

#include "core/interrupt.h"
#include "io/byte_source.h"
#include "io/output_file.h"
#include "io/pair_reader.h"
#include "pipeline/pipeline.h"
#include "stages/dedup_table.h"
#include "stages/stage.h"

extern char** environ;

namespace sheaf {

static_assert(std::endian::native == std::endian::little, "part files are written in the host's byte order");

namespace {

using json = nlohmann::json;
namespace fs = std::filesystem;

constexpr int kFormat = 1;
constexpr uint64_t kLineMask = (uint64_t{1} << 48) - 1;  // a key row's line; the corpus is in the top 16 bits

std::string part_path(const std::string& work, size_t k, const char* ext) {
  return work + "/parts/" + std::to_string(k) + ext;
}

Error plan_error(const std::string& path, const std::string& what) {
  return Error(ErrorKind::kInput, what, Location{path, 0, 0, {}});
}

// A job's lock: a write lock (fcntl) on "N.lock" beside the job's files,
// held until the process ends. A second copy of the same job (a scheduler's
// requeue beside a hand re-run) waits for the first and then finds its work
// done; a new plan is refused while a job of the old one runs. Network file
// systems honour these locks across nodes when they support locking at all
// (NFS with its lock service, Lustre mounted with flock); where they do not,
// the job says so and runs without the lock.
class JobLock {
 public:
  JobLock() = default;
  JobLock(const JobLock&) = delete;
  JobLock& operator=(const JobLock&) = delete;
  ~JobLock() {
    if (fd_ >= 0) ::close(fd_);
  }
  // Takes the lock for `job` ("map job 3"). With `wait`, waits while another
  // process holds it and answers whether it had to; without, another
  // holder is an error.
  Result<bool> take(const std::string& path, const std::string& job, bool wait) {
    fd_ = ::open(path.c_str(), O_RDWR | O_CREAT | O_CLOEXEC | O_NOFOLLOW, 0644);
    if (fd_ < 0)
      return Error(ErrorKind::kIo, std::string("cannot make the job's lock file: ") + std::strerror(errno),
                   Location{path, 0, 0, {}});
    bool waited = false;
    for (;;) {
      struct flock fl {};
      fl.l_type = F_WRLCK;
      fl.l_whence = SEEK_SET;
      if (::fcntl(fd_, F_SETLK, &fl) == 0) return waited;
      int e = errno;
      if (e != EACCES && e != EAGAIN) {
        std::fprintf(stderr, "sheaf: warning: %s: the file system does not lock files (%s); %s runs without its lock\n",
                     path.c_str(), std::strerror(e), job.c_str());
        return waited;
      }
      if (!wait)
        return Error(ErrorKind::kUsage, job + " is running in another process; let it finish, or stop it, first",
                     Location{path, 0, 0, {}});
      if (!waited) std::fprintf(stderr, "sheaf: %s is running in another process; waiting for it\n", job.c_str());
      waited = true;
      if (interrupt_requested().load()) return interrupted_error();
      ::usleep(200 * 1000);
    }
  }

  // Takes the lock for `job`, waiting for another copy that holds it: true
  // when the job is left to do, false when that copy finished it (`done`)
  // while this one waited.
  Result<bool> claim(const std::string& path, const std::string& job, const std::function<bool()>& done) {
    auto waited = take(path, job, true);
    if (!waited.ok()) return waited.error();
    if (*waited && done()) {
      std::fprintf(stderr, "sheaf: %s was done by the other process; nothing left to do\n", job.c_str());
      return false;
    }
    return true;
  }

 private:
  int fd_ = -1;
};

Result<std::string> read_small(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) return Error(ErrorKind::kInput, "cannot read it", Location{path, 0, 0, {}});
  std::stringstream s;
  s << in.rdbuf();
  if (in.bad()) return Error(ErrorKind::kIo, "cannot read it", Location{path, 0, 0, {}});
  return s.str();
}

Status write_small(const std::string& path, const std::string& text) {
  OutputFile f;
  SHEAF_TRY(f.open(path));
  f.write(text);
  return f.commit();
}

std::string hash_hex(uint64_t v) { return hex64(v); }

// The pipeline as the plan names it, with the hash every job checks.
Result<Pipeline> load_planned(const SpreadPlan& plan) {
  if (::chdir(plan.cwd.c_str()) != 0)
    return Error(ErrorKind::kInput,
                 std::string("cannot work in the plan's directory: ") + std::strerror(errno) +
                     "; every job needs the same file system as the plan",
                 Location{plan.cwd, 0, 0, {}});
  std::vector<Override> ov;
  for (const auto& s : plan.sets) {
    auto o = parse_override(s);
    if (!o.ok()) return o.error();
    ov.push_back(o.value());
  }
  auto p = load_pipeline(plan.pipeline, ov);
  if (!p.ok()) return p.error();
  if (plan.parts.back().corpus + 1 != p->corpora.size())
    return Error(ErrorKind::kInput, "the plan's parts do not cover the pipeline's corpora; plan the run again",
                 Location{plan.pipeline, 0, 0, {}});
  std::string r = render_pipeline(*p);
  if (XXH3_64bits(r.data(), r.size()) != plan.pipeline_hash)
    return Error(ErrorKind::kInput,
                 "the pipeline file (or a --set of the plan) changed since the run was planned; plan it again",
                 Location{plan.pipeline, 0, 0, {}});
  return p;
}

std::vector<std::vector<std::string>> resolved_paths(const Pipeline& p) {
  std::vector<std::vector<std::string>> paths;
  for (const auto& c : p.corpora) {
    paths.emplace_back();
    for (const auto& f : c.files) paths.back().push_back(p.resolve(f));
  }
  return paths;
}

// The first streaming stage that keeps state across pairs: the map jobs run
// the stages before it.
size_t stateless_prefix(const std::vector<std::unique_ptr<Stage>>& stages) {
  size_t k = 0;
  while (k < stages.size() && !stages[k]->has_reduce()) ++k;
  return k;
}

// The byte just after the first LF at or after `at` in `path` (`size` when
// none): parts start at line starts.
Result<uint64_t> next_line_start(int fd, const std::string& path, uint64_t at, uint64_t size) {
  char buf[1 << 16];
  while (at < size) {
    ssize_t r = ::pread(fd, buf, sizeof buf, static_cast<off_t>(at));
    if (r < 0 && errno == EINTR) continue;
    if (r <= 0) return Error(ErrorKind::kIo, "cannot read input", Location{path, 0, 0, at});
    const void* nl = std::memchr(buf, '\n', static_cast<size_t>(r));
    if (nl) return at + static_cast<uint64_t>(static_cast<const char*>(nl) - buf) + 1;
    at += static_cast<uint64_t>(r);
  }
  return size;
}

// Fixed fields of one pair record in K.pairs (docs/cluster.md).
struct PairHead {
  uint64_t line;
  uint32_t corpus;
  int32_t drop_stage;
  int32_t split;
  uint32_t source_at;  // kStored, or where the source text starts in the raw line
  uint64_t key[2];
  uint32_t words[2], chars[2];
  uint32_t len[5];  // reason, raw, raw_target, source text, target text
  uint32_t target_at;  // kStored, or where the target text starts in its raw line
};
constexpr uint32_t kStored = UINT32_MAX;

// The raw line a side's text is cut from when it was not rewritten: the
// target line for two aligned files, else the one line.
std::string_view text_base(std::string_view raw, std::string_view raw_target, int side) {
  return side == 1 && !raw_target.empty() ? raw_target : raw;
}

// Where `text` starts inside `base`, or kStored when it is not a piece of it.
uint32_t offset_in(std::string_view base, std::string_view text) {
  auto b = reinterpret_cast<uintptr_t>(base.data()), t = reinterpret_cast<uintptr_t>(text.data());
  if (text.empty() || t < b || t + text.size() > b + base.size()) return kStored;
  return static_cast<uint32_t>(t - b);
}
static_assert(sizeof(PairHead) == 80);


std::string keys_path(const std::string& work, size_t k, uint32_t bucket) {
  return work + "/parts/" + std::to_string(k) + ".keys." + std::to_string(bucket);
}
std::string bucket_path(const std::string& work, size_t b, const char* ext) {
  return work + "/buckets/" + std::to_string(b) + ext;
}

// The bucket of a key: its first word (0 counted as 1, as the dedup table
// does) scaled to [0, buckets).
uint32_t bucket_of(uint64_t key0, uint32_t buckets) {
  if (key0 == 0) key0 = 1;
  __extension__ using u128 = unsigned __int128;
  return static_cast<uint32_t>((static_cast<u128>(key0) * buckets) >> 64);
}

// A stage's map() alone: the map jobs compute the bucketed stage's keys.
class MapOnly : public Stage {
 public:
  explicit MapOnly(Stage* inner) : inner_(inner) {}
  void map(PairBatch& b) override { inner_->map(b); }

 private:
  Stage* inner_;
};

// A map job's key rows, one file per bucket (docs/cluster.md: K.keys.J):
// the key's words, the pair's index in the part, its corpus and line.
class BucketWriter {
 public:
  BucketWriter(const std::string& work, size_t part, uint32_t buckets, uint32_t words)
      : words_(words), buf_(buckets), rows_(buckets, 0), bytes_(buckets, 0), sums_(buckets, 0) {
    for (uint32_t b = 0; b < buckets; ++b) paths_.push_back(keys_path(work, part, b));
  }
  ~BucketWriter() { discard(); }
  Status open() {
    for (const auto& path : paths_) {
      files_.emplace_back(std::make_unique<OutputFile>());
      SHEAF_TRY(files_.back()->open(path));
    }
    return {};
  }
  void add(const Pair& p, uint64_t index) {
    uint32_t b = bucket_of(p.key[0], static_cast<uint32_t>(buf_.size()));
    std::string& out = buf_[b];
    uint64_t row[4] = {p.key[0], p.key[1], index, (uint64_t{p.corpus} << 48) | (p.line & kLineMask)};
    if (words_ == 1) {
      out.append(reinterpret_cast<const char*>(&row[0]), 8);
      out.append(reinterpret_cast<const char*>(&row[2]), 16);
    } else {
      out.append(reinterpret_cast<const char*>(row), 32);
    }
    ++rows_[b];
    held_ += words_ == 1 ? 24 : 32;
    if (held_ >= kHold) flush();
  }
  void flush() {
    for (size_t b = 0; b < buf_.size(); ++b) {
      if (buf_[b].empty()) continue;
      files_[b]->write_now(buf_[b]);
      buf_[b].clear();
    }
    held_ = 0;
  }
  Status commit() {
    flush();
    for (size_t b = 0; b < files_.size(); ++b) {
      SHEAF_TRY(files_[b]->commit());
      bytes_[b] = files_[b]->size();
      sums_[b] = files_[b]->checksum();
    }
    return {};
  }
  void discard() {
    for (auto& f : files_)
      if (!f->committed()) f->discard();
  }
  uint64_t rows(uint32_t b) const { return rows_[b]; }
  uint64_t bytes(uint32_t b) const { return bytes_[b]; }
  uint64_t checksum(uint32_t b) const { return sums_[b]; }

 private:
  static constexpr size_t kHold = 4 << 20;  // bytes held before they go to the files
  uint32_t words_;
  std::vector<std::string> paths_, buf_;
  std::vector<std::unique_ptr<OutputFile>> files_;
  std::vector<uint64_t> rows_, bytes_, sums_;
  size_t held_ = 0;
};
// The lines of a file of `bytes` bytes (compressed or not), estimated from
// its first MiB of text: the lines there per byte of the file read.
Result<uint64_t> estimate_lines(const std::string& path, uint64_t bytes) {
  auto src = open_byte_source(path);
  if (!src.ok()) return src.error();
  std::string buf(1 << 20, '\0');
  uint64_t got = 0, lines = 0;
  while (got < buf.size()) {
    auto r = src.value()->read(buf.data(), buf.size() - got);
    if (!r.ok()) return r.error();
    if (*r == 0) break;
    lines += static_cast<uint64_t>(std::count(buf.data(), buf.data() + *r, '\n'));
    got += *r;
  }
  uint64_t read = std::max<uint64_t>(1, src.value()->consumed());
  return std::max<uint64_t>(1, lines) * std::max<uint64_t>(bytes, read) / read;
}

}  // namespace

Result<SpreadPlan> read_spread_plan(const std::string& work) {
  std::string path = work + "/plan.json";
  auto text = read_small(path);
  if (!text.ok()) return Error(ErrorKind::kInput, "no plan here: run `sheaf spread plan` first", Location{path, 0, 0, {}});
  auto j = json::parse(*text, nullptr, false);
  SpreadPlan plan;
  try {
    if (j.is_discarded() || j.value("format", "") != "sheaf-spread-plan" || j.value("version", 0) != kFormat)
      return plan_error(path, "not a sheaf plan of format version 1");
    plan.pipeline = j.at("pipeline").get<std::string>();
    plan.cwd = j.at("cwd").get<std::string>();
    plan.sets = j.at("sets").get<std::vector<std::string>>();
    plan.pipeline_hash = std::stoull(j.at("pipeline_hash").get<std::string>(), nullptr, 16);
    plan.buckets = j.at("buckets").get<uint32_t>();
    plan.key_words = j.at("key_words").get<uint32_t>();
    if (plan.buckets > 0 && (plan.key_words < 1 || plan.key_words > 2))
      return plan_error(path, "damaged plan (key_words); plan the run again");
    for (const auto& pj : j.at("parts")) {
      SpreadPart part;
      part.corpus = pj.at("corpus").get<uint32_t>();
      part.whole = pj.at("whole").get<bool>();
      if (!part.whole) {
        part.file = pj.at("file").get<std::string>();
        part.begin = pj.at("begin").get<uint64_t>();
        part.end = pj.at("end").get<uint64_t>();
      }
      plan.parts.push_back(std::move(part));
    }
  } catch (const std::exception& e) {
    return plan_error(path, std::string("damaged plan (") + e.what() + "); plan the run again");
  }
  if (plan.parts.empty()) return plan_error(path, "the plan has no part; plan the run again");
  if (plan.buckets > kMaxBuckets) return plan_error(path, "damaged plan (buckets); plan the run again");
  // Parts in input order: corpora in order, each corpus either one whole
  // part or byte ranges that follow each other from byte 0.
  for (size_t k = 0; k < plan.parts.size(); ++k) {
    const SpreadPart& part = plan.parts[k];
    const SpreadPart* prev = k > 0 ? &plan.parts[k - 1] : nullptr;
    bool first_of_corpus = prev == nullptr || prev->corpus != part.corpus;
    bool ok = first_of_corpus ? (prev == nullptr ? part.corpus == 0 : part.corpus == prev->corpus + 1) &&
                                    (part.whole || part.begin == 0)
                              : !part.whole && !prev->whole && part.file == prev->file && part.begin == prev->end;
    if (!ok || (!part.whole && part.end <= part.begin))
      return plan_error(path, "damaged plan (part " + std::to_string(k) + " does not follow the part before it); plan "
                              "the run again");
  }
  plan.id = XXH3_64bits(text->data(), text->size());
  return plan;
}

Result<SpreadPlan> spread_plan(const std::string& pipeline, const std::vector<std::string>& sets, int parts,
                               const std::string& work, int buckets, uint64_t job_mib) {
  if (parts < 1) return Error(ErrorKind::kUsage, "--parts must be at least 1");
  SpreadPlan plan;
  std::error_code ec;
  plan.pipeline = pipeline;
  plan.cwd = fs::current_path(ec).string();
  plan.sets = sets;
  std::vector<Override> ov;
  for (const auto& s : sets) {
    auto o = parse_override(s);
    if (!o.ok()) return o.error();
    ov.push_back(o.value());
  }
  auto p = load_pipeline(plan.pipeline, ov);
  if (!p.ok()) return p.error();
  SHEAF_TRY(check_stages(*p));
  // A file named by a relative path is read relative to `cwd`.
  std::string r = render_pipeline(*p);
  plan.pipeline_hash = XXH3_64bits(r.data(), r.size());
  auto paths = resolved_paths(*p);

  // Sizes first: parts are cut to about total / parts bytes each.
  uint64_t total = 0;
  std::vector<uint64_t> sizes(paths.size(), 0);
  std::vector<bool> cuttable(paths.size(), false);
  for (size_t c = 0; c < paths.size(); ++c) {
    for (const auto& f : paths[c]) {
      if (f == "-") return Error(ErrorKind::kUsage, "a spread run cannot read standard input; name a file");
      struct stat st {};
      if (::stat(f.c_str(), &st) != 0 || !S_ISREG(st.st_mode))
        return Error(ErrorKind::kInput, "cannot read input: not a regular file", Location{f, 0, 0, {}});
      sizes[c] += static_cast<uint64_t>(st.st_size);
    }
    total += sizes[c];
    if (paths[c].size() == 1 && p->corpora[c].layout != Layout::kAligned) {
      auto src = open_byte_source(paths[c][0]);
      if (!src.ok()) return src.error();
      cuttable[c] = src.value()->compression() == Compression::kNone;
    }
  }
  uint64_t target = std::max<uint64_t>(1, (total + static_cast<uint64_t>(parts) - 1) / static_cast<uint64_t>(parts));
  for (size_t c = 0; c < paths.size(); ++c) {
    uint64_t n = cuttable[c] ? std::max<uint64_t>(1, (sizes[c] + target / 2) / target) : 1;
    if (n == 1) {
      plan.parts.push_back({static_cast<uint32_t>(c), true, {}, 0, 0});
      continue;
    }
    const std::string& f = paths[c][0];
    int fd = ::open(f.c_str(), O_RDONLY | O_CLOEXEC);
    if (fd < 0) return Error(ErrorKind::kInput, std::string("cannot open input: ") + std::strerror(errno), Location{f, 0, 0, {}});
    uint64_t at = 0;
    for (uint64_t i = 1; i <= n && at < sizes[c]; ++i) {
      uint64_t end = sizes[c];
      if (i < n) {
        // The first part holds at least the bytes a whole-file reader
        // looks at to tell the encoding (512), so it judges alike.
        auto cut = next_line_start(fd, f, std::max({at, sizes[c] / n * i, uint64_t{512}}), sizes[c]);
        if (!cut.ok()) {
          ::close(fd);
          return cut.error();
        }
        end = *cut;
      }
      if (end > at) plan.parts.push_back({static_cast<uint32_t>(c), false, f, at, end});
      at = end;
    }
    ::close(fd);
    if (plan.parts.empty() || plan.parts.back().corpus != c)  // an empty file
      plan.parts.push_back({static_cast<uint32_t>(c), true, {}, 0, 0});
  }

  // Bucket jobs, when the first stateful stage keeps the first pair of each key.
  {
    auto built = build_streaming_stages(*p);
    if (!built.ok()) return built.error();
    size_t prefix = stateless_prefix(built.value());
    int words = prefix < built->size() ? built.value()[prefix]->first_of_key_words() : 0;
    if (words > 0 && buckets != 0) {
      plan.key_words = static_cast<uint32_t>(words);
      if (buckets < 0) {
        // Enough buckets that each one's table fits the job's memory.
        uint64_t lines = 0;
        for (size_t c = 0; c < paths.size(); ++c) {
          auto n = estimate_lines(paths[c].front(), sizes[c] / paths[c].size());
          if (!n.ok()) return n.error();
          lines += *n;
        }
        uint64_t budget = std::max<uint64_t>(job_mib, 32) - 16;  // MiB left for the table
        // At a doubling the old table and the new one, three times its
        // slots, live together: 4 slots a key at 3/4 load (docs/cluster.md).
        uint64_t need = lines * 4 * (8 * static_cast<uint64_t>(words) + 8);
        buckets = static_cast<int>(std::clamp<uint64_t>((need + (budget << 20) - 1) / (budget << 20), 1, kMaxBuckets));
      }
      plan.buckets = static_cast<uint32_t>(buckets);
    }
  }
  fs::create_directories(work + "/parts", ec);
  fs::create_directories(work + "/buckets", ec);
  if (ec) return Error(ErrorKind::kIo, "cannot make the work directory: " + ec.message(), Location{work, 0, 0, {}});
  json j;
  j["format"] = "sheaf-spread-plan";
  j["version"] = kFormat;
  j["pipeline"] = plan.pipeline;
  j["cwd"] = plan.cwd;
  j["sets"] = plan.sets;
  j["pipeline_hash"] = hash_hex(plan.pipeline_hash);
  j["buckets"] = plan.buckets;
  j["key_words"] = plan.key_words;
  j["parts"] = json::array();
  for (const auto& part : plan.parts) {
    json pj{{"corpus", part.corpus}, {"whole", part.whole}};
    if (!part.whole) {
      pj["file"] = part.file;
      pj["begin"] = part.begin;
      pj["end"] = part.end;
    }
    j["parts"].push_back(pj);
  }
  // A new plan makes the parts of an old one stale: they are removed, unless
  // a job of the old plan still runs. The jobs' locks are held until the
  // files are gone, and the (empty) lock files stay: a job that holds one
  // keeps excluding its second copies.
  std::vector<std::unique_ptr<JobLock>> held;
  for (const char* sub : {"/parts", "/buckets"})
    for (const auto& e : fs::directory_iterator(work + sub, ec))
      if (e.path().extension() == ".lock") {
        held.push_back(std::make_unique<JobLock>());
        auto took = held.back()->take(e.path().string(),
                                      "a job of the earlier plan (" + e.path().filename().string() + ")", false);
        if (!took.ok()) return took.error();
      }
  for (const char* sub : {"/parts", "/buckets"})
    for (const auto& e : fs::directory_iterator(work + sub, ec))
      if (e.path().extension() != ".lock") fs::remove(e.path(), ec);
  SHEAF_TRY(write_small(work + "/plan.json", j.dump(1) + "\n"));
  return plan;
}

namespace {
// A job is done when its record is whole and names this plan, and its part
// or verdict files have the sizes the record gives (their checksums are
// checked by the jobs that read them; a part's key files by the bucket
// jobs).
bool part_done(const std::string& work, size_t k, const SpreadPlan& plan);
bool bucket_done(const std::string& work, size_t b, const SpreadPlan& plan);
}  // namespace

Status spread_map(const std::string& work, size_t k, int threads) {
  auto plan = read_spread_plan(work);
  if (!plan.ok()) return plan.error();
  if (k >= plan->parts.size())
    return Error(ErrorKind::kUsage, "the plan has " + std::to_string(plan->parts.size()) + " parts (0 to " +
                                        std::to_string(plan->parts.size() - 1) + "); --part " + std::to_string(k) +
                                        " is not one of them");
  auto p = load_planned(*plan);
  if (!p.ok()) return p.error();
  const SpreadPart& part = plan->parts[k];
  auto built = build_streaming_stages(*p);
  if (!built.ok()) return built.error();
  auto& stages = built.value();
  size_t prefix = stateless_prefix(stages);

  // A re-run replaces what an earlier attempt left, unless that attempt is
  // still running.
  JobLock lock;
  auto todo = lock.claim(part_path(work, k, ".lock"), "map job " + std::to_string(k),
                         [&] { return part_done(work, k, *plan); });
  if (!todo.ok()) return todo.error();
  if (!*todo) return {};
  std::error_code ec;
  for (const char* ext : {".json", ".pairs", ".long"}) {
    fs::remove(part_path(work, k, ext), ec);
    fs::remove(part_path(work, k, ext) + ".partial", ec);
  }
  for (uint32_t b = 0; b < plan->buckets; ++b) {
    fs::remove(keys_path(work, k, b), ec);
    fs::remove(keys_path(work, k, b) + ".partial", ec);
  }
  const bool bucketed = plan->buckets > 0;
  if (bucketed && (prefix >= stages.size() || stages[prefix]->first_of_key_words() != static_cast<int>(plan->key_words)))
    return Error(ErrorKind::kInternal, "the plan's bucketed stage is not the pipeline's; plan the run again");
  MapOnly key_maker(bucketed ? stages[prefix].get() : nullptr);
  BucketWriter keys(work, k, plan->buckets, plan->key_words);
  if (bucketed) SHEAF_TRY(keys.open());
  auto rd = PairReader::open_part(p->corpora, resolved_paths(*p), part.corpus, part.whole, part.begin, part.end);
  if (!rd.ok()) return rd.error();
  OutputFile pairs, longs;
  SHEAF_TRY(pairs.open(part_path(work, k, ".pairs")));
  SHEAF_TRY(longs.open(part_path(work, k, ".long")));
  rd.value()->set_oversize_sink([&longs](size_t corpus, std::string_view side, uint64_t line, std::string_view bytes,
                                         bool last) -> Status {
    char head[18];
    uint32_t c = static_cast<uint32_t>(corpus), n = static_cast<uint32_t>(bytes.size());
    std::memcpy(head, &line, 8);
    std::memcpy(head + 8, &c, 4);
    head[12] = last ? 1 : 0;
    head[13] = static_cast<char>(side.size());
    std::memcpy(head + 14, &n, 4);
    longs.write(std::string_view(head, sizeof head));
    longs.write(side);
    longs.write(bytes);
    return longs.status();
  });
  ReaderSource source(std::move(rd.value()));
  StreamPass pass;
  pass.source = &source;
  for (size_t i = 0; i < prefix; ++i) pass.stages.push_back(stages[i].get());
  if (bucketed) pass.stages.push_back(&key_maker);  // the keys, not the table
  pass.output_check = false;
  pass.threads = threads;
  uint64_t count = 0;
  pass.take = [&pairs, &count, &keys, bucketed](PairBatch& b) -> Status {
    for (const Pair& pr : b.pairs) {
      bool kept = pr.kept();
      if (kept && bucketed) keys.add(pr, count);
      // A side's text that is still a piece of its raw line is written as
      // its place there, not again.
      uint32_t at[2] = {kStored, kStored};
      for (int s = 0; s < 2 && kept; ++s) at[s] = offset_in(text_base(pr.raw, pr.raw_target, s), pr.text[static_cast<size_t>(s)]);
      std::string_view fields[5] = {pr.reason, pr.raw, pr.raw_target,
                                    kept && at[0] == kStored ? pr.text[0] : std::string_view(),
                                    kept && at[1] == kStored ? pr.text[1] : std::string_view()};
      PairHead h{};
      h.source_at = at[0];
      h.target_at = at[1];
      h.line = pr.line;
      h.corpus = pr.corpus;
      h.drop_stage = pr.drop_stage;
      h.split = pr.split;
      h.key[0] = pr.key[0];
      h.key[1] = pr.key[1];
      for (int s = 0; s < 2; ++s) {
        h.words[s] = pr.words[static_cast<size_t>(s)];
        h.chars[s] = pr.chars[static_cast<size_t>(s)];
      }
      for (int f = 0; f < 5; ++f) {
        if (fields[f].size() >= UINT32_MAX)
          return Error(ErrorKind::kInput, "a line of 4 GiB or more cannot go into a part; lower max_line_bytes");
        h.len[f] = static_cast<uint32_t>(fields[f].size());
      }
      for (int s = 0; s < 2; ++s)
        if (at[s] != kStored) h.len[3 + s] = static_cast<uint32_t>(pr.text[static_cast<size_t>(s)].size());
      pairs.write(std::string_view(reinterpret_cast<const char*>(&h), sizeof h));
      for (const auto& f : fields) pairs.write(f);
      pairs.add_record();
      ++count;
    }
    return pairs.status();
  };
  Status st = stream_pass(pass);
  for (size_t i = 0; i < prefix && st.ok(); ++i) st = stages[i]->finish();
  if (st.ok()) st = pairs.commit();
  if (st.ok()) st = longs.commit();
  if (st.ok() && bucketed) st = keys.commit();
  if (!st.ok()) {
    pairs.discard();
    longs.discard();
    keys.discard();
    return st;
  }
  auto inputs = source.inputs(part.corpus);
  json j;
  j["format"] = "sheaf-spread-part";
  j["version"] = kFormat;
  j["part"] = k;
  j["pipeline_hash"] = hash_hex(plan->pipeline_hash);
  j["plan"] = hash_hex(plan->id);
  j["first_stage"] = prefix;
  j["pairs"] = count;
  j["lines"] = inputs.ok() && !inputs->empty() ? inputs->front().lines : 0;
  j["pairs_bytes"] = pairs.size();
  j["pairs_checksum"] = hash_hex(pairs.checksum());
  j["long_bytes"] = longs.size();
  j["long_checksum"] = hash_hex(longs.checksum());
  j["keys"] = json::array();
  for (uint32_t b = 0; b < plan->buckets; ++b)
    j["keys"].push_back({{"rows", keys.rows(b)}, {"bytes", keys.bytes(b)}, {"checksum", hash_hex(keys.checksum(b))}});
  j["counters"] = json::array();
  for (size_t i = 0; i < prefix; ++i) {
    json cs = json::array();
    for (const auto& [name, v] : stages[i]->counters()) cs.push_back(json::array({name, v}));
    j["counters"].push_back(cs);
  }
  j["inputs"] = json::array();
  if (part.whole && inputs.ok())
    for (const auto& in : *inputs)
      j["inputs"].push_back({{"path", in.path},
                             {"bytes", in.bytes},
                             {"checksum", hash_hex(in.checksum)},
                             {"compression", in.compression},
                             {"lines", in.lines}});
  return write_small(part_path(work, k, ".json"), j.dump(1) + "\n");
}

namespace {

struct PartInfo {
  uint64_t pairs = 0, lines = 0, pairs_bytes = 0, pairs_checksum = 0, long_bytes = 0, long_checksum = 0;
  struct Keys {
    uint64_t rows = 0, bytes = 0, checksum = 0;
  };
  std::vector<Keys> keys;  // per bucket
  size_t first_stage = 0;
  std::vector<std::vector<std::pair<std::string, uint64_t>>> counters;
  std::vector<InputInfo> inputs;
};

// A map or bucket job's record (`what` "part" or "bucket", number `n`):
// parsed, of its format, naming job `n` of `plan`; or the error that says
// the job is not done, or must run again, and how.
Result<json> read_job_record(const std::string& work, const char* what, size_t n, const SpreadPlan& plan) {
  bool part = std::string_view(what) == "part";
  std::string path = part ? part_path(work, n, ".json") : bucket_path(work, n, ".json");
  std::string job = part ? "map" : "bucket";
  std::string cmd = "`sheaf spread " + job + " " + work + " --" + what + " " + std::to_string(n) + "`";
  auto text = read_small(path);
  if (!text.ok())
    return Error(ErrorKind::kInput, std::string(what) + " " + std::to_string(n) + " is not done: run " + cmd,
                 Location{path, 0, 0, {}});
  auto j = json::parse(*text, nullptr, false);
  try {
    if (j.is_discarded() || !j.is_object() || j.value("format", "") != "sheaf-spread-" + std::string(what) ||
        j.value("version", 0) != kFormat)
      return plan_error(path, std::string("not a sheaf ") + what + " record of format version 1; run " + cmd);
    if (j.at(what).get<size_t>() != n ||
        std::stoull(j.at("pipeline_hash").get<std::string>(), nullptr, 16) != plan.pipeline_hash ||
        std::stoull(j.at("plan").get<std::string>(), nullptr, 16) != plan.id)
      return plan_error(path, std::string("this ") + what + " belongs to another plan; run " + cmd);
  } catch (const std::exception& e) {
    return plan_error(path, std::string("damaged ") + what + " record (" + e.what() + "); run " + cmd);
  }
  return j;
}

Result<PartInfo> read_part_info(const std::string& work, size_t k, const SpreadPlan& plan) {
  std::string path = part_path(work, k, ".json");
  auto record = read_job_record(work, "part", k, plan);
  if (!record.ok()) return record.error();
  const json& j = *record;
  PartInfo info;
  try {
    info.pairs = j.at("pairs").get<uint64_t>();
    info.lines = j.at("lines").get<uint64_t>();
    info.pairs_bytes = j.at("pairs_bytes").get<uint64_t>();
    info.pairs_checksum = std::stoull(j.at("pairs_checksum").get<std::string>(), nullptr, 16);
    info.long_bytes = j.at("long_bytes").get<uint64_t>();
    info.long_checksum = std::stoull(j.at("long_checksum").get<std::string>(), nullptr, 16);
    info.first_stage = j.at("first_stage").get<size_t>();
    for (const auto& kj : j.at("keys"))
      info.keys.push_back({kj.at("rows").get<uint64_t>(), kj.at("bytes").get<uint64_t>(),
                           std::stoull(kj.at("checksum").get<std::string>(), nullptr, 16)});
    if (info.keys.size() != plan.buckets)
      return plan_error(path, "the part's key buckets are not the plan's; run its map job again");
    for (const auto& cs : j.at("counters")) {
      info.counters.emplace_back();
      for (const auto& c : cs) info.counters.back().emplace_back(c.at(0).get<std::string>(), c.at(1).get<uint64_t>());
    }
    for (const auto& in : j.at("inputs"))
      info.inputs.push_back({in.at("path").get<std::string>(), in.at("bytes").get<uint64_t>(),
                             std::stoull(in.at("checksum").get<std::string>(), nullptr, 16),
                             in.at("compression").get<std::string>(), in.at("lines").get<uint64_t>()});
  } catch (const std::exception& e) {
    return plan_error(path, std::string("damaged part record (") + e.what() + "); run its map job again");
  }
  return info;
}

// Where each part's lines and pairs start in the whole input: its first
// line follows the lines of the earlier parts of its corpus; its first pair
// follows every pair of the earlier parts.
void part_starts(const SpreadPlan& plan, const std::vector<PartInfo>& infos, std::vector<uint64_t>& line0,
                 std::vector<uint64_t>& pair0) {
  std::vector<uint64_t> lines_before;
  uint64_t pairs = 0;
  for (size_t k = 0; k < plan.parts.size(); ++k) {
    uint32_t c = plan.parts[k].corpus;
    if (c >= lines_before.size()) lines_before.resize(c + 1, 0);
    line0.push_back(lines_before[c]);
    lines_before[c] += infos[k].lines;
    pair0.push_back(pairs);
    pairs += infos[k].pairs;
  }
}

Result<std::vector<PartInfo>> read_part_infos(const std::string& work, const SpreadPlan& plan) {
  std::vector<PartInfo> infos;
  for (size_t k = 0; k < plan.parts.size(); ++k) {
    auto info = read_part_info(work, k, plan);
    if (!info.ok()) return info.error();
    if (!infos.empty() && info->first_stage != infos.front().first_stage)
      return plan_error(part_path(work, k, ".json"), "the parts were mapped by different builds; run them again");
    infos.push_back(std::move(info.value()));
  }
  return infos;
}

// A file read whole in order, checked against its record's size and XXH3-64.
class CheckedReader {
 public:
  ~CheckedReader() {
    if (f_) std::fclose(f_);
    if (x_) XXH3_freeState(x_);
  }
  Status open(const std::string& path, uint64_t bytes, uint64_t checksum) {
    path_ = path;
    bytes_ = bytes;
    checksum_ = checksum;
    f_ = std::fopen(path.c_str(), "rb");
    if (!f_) return Error(ErrorKind::kInput, "cannot read it; run the job that makes it again", Location{path, 0, 0, {}});
    std::setvbuf(f_, nullptr, _IOFBF, 1 << 14);
    x_ = XXH3_createState();
    XXH3_64bits_reset(x_);
    return {};
  }
  Status read(void* to, size_t n) {
    if (read_ + n > bytes_ || std::fread(to, 1, n, f_) != n)
      return Error(ErrorKind::kData, "it ends early (damaged); run the job that makes it again",
                   Location{path_, 0, 0, read_});
    XXH3_64bits_update(x_, to, n);
    read_ += n;
    return {};
  }
  Status finish() {
    if (read_ != bytes_ || XXH3_64bits_digest(x_) != checksum_)
      return Error(ErrorKind::kData, "it does not match its record (damaged or replaced); run the job that makes it again",
                   Location{path_, 0, 0, {}});
    return {};
  }

 private:
  std::string path_;
  FILE* f_ = nullptr;
  XXH3_state_t* x_ = nullptr;
  uint64_t bytes_ = 0, checksum_ = 0, read_ = 0;
};

struct BucketInfo {
  uint64_t distinct = 0, verdicts = 0, bytes = 0, checksum = 0;
};

Result<BucketInfo> read_bucket_info(const std::string& work, size_t b, const SpreadPlan& plan) {
  std::string path = bucket_path(work, b, ".json");
  auto record = read_job_record(work, "bucket", b, plan);
  if (!record.ok()) return record.error();
  const json& j = *record;
  BucketInfo info;
  try {
    info.distinct = j.at("distinct").get<uint64_t>();
    info.verdicts = j.at("verdicts").get<uint64_t>();
    info.bytes = j.at("bytes").get<uint64_t>();
    info.checksum = std::stoull(j.at("checksum").get<std::string>(), nullptr, 16);
  } catch (const std::exception& e) {
    return plan_error(path, std::string("damaged bucket record (") + e.what() + "); run its bucket job again");
  }
  if (info.bytes != info.verdicts * 16) return plan_error(path, "damaged bucket record; run its bucket job again");
  return info;
}

bool size_is(const std::string& path, uint64_t want) {
  std::error_code ec;
  uint64_t n = fs::file_size(path, ec);
  return !ec && n == want;
}

bool part_done(const std::string& work, size_t k, const SpreadPlan& plan) {
  auto info = read_part_info(work, k, plan);
  return info.ok() && size_is(part_path(work, k, ".pairs"), info->pairs_bytes) &&
         (info->long_bytes == 0 || size_is(part_path(work, k, ".long"), info->long_bytes));
}

bool bucket_done(const std::string& work, size_t b, const SpreadPlan& plan) {
  auto info = read_bucket_info(work, b, plan);
  return info.ok() && size_is(bucket_path(work, b, ".verdicts"), info->bytes);
}

// The parts' pairs, in input order, as pass 1's batches.
class PartsSource : public BatchSource {
 public:
  // `keyed`: the bucketed stage (owned with the other stages in `stages`),
  // whose drops come from the bucket jobs' verdicts; nullptr: none.
  PartsSource(std::string work, SpreadPlan plan, std::vector<PartInfo> infos, std::vector<BucketInfo> buckets,
              std::vector<std::unique_ptr<Stage>> stages, const Stage* keyed)
      : work_(std::move(work)), plan_(std::move(plan)), infos_(std::move(infos)) {
    buckets_ = std::move(buckets);
    stages_ = std::move(stages);
    keyed_ = keyed;
    std::vector<uint64_t> pair0;
    part_starts(plan_, infos_, offset_, pair0);
    for (const auto& st : stages_)
      if (const SplitRouter* r = st->router()) max_split_ = static_cast<int32_t>(r->names().size());
  }

  // Opens the verdict files and reads each one's first row.
  Status open_verdicts() {
    verdicts_.resize(buckets_.size());
    for (size_t b = 0; b < buckets_.size(); ++b) {
      SHEAF_TRY(verdicts_[b].in.open(bucket_path(work_, b, ".verdicts"), buckets_[b].bytes, buckets_[b].checksum));
      verdicts_[b].left = buckets_[b].verdicts;
      SHEAF_TRY(advance(b));
    }
    return {};
  }
  ~PartsSource() override {
    if (in_) std::fclose(in_);
  }

  Result<bool> next(PairBatch& b, size_t max_pairs, size_t max_bytes) override {
    for (;;) {
      if (!in_) {
        if (next_part_ >= plan_.parts.size()) {
          if (!heap_.empty())
            return Error(ErrorKind::kData, "a bucket's verdict names a pair past the end of the parts (damaged); run "
                                           "the bucket jobs again",
                         Location{bucket_path(work_, heap_.top().second, ".verdicts"), 0, 0, {}});
          for (auto& v : verdicts_) SHEAF_TRY(v.in.finish());
          verdicts_.clear();
          return false;
        }
        SHEAF_TRY(open_part(next_part_++));
      }
      std::vector<std::array<size_t, 4>> at;      // raw offset, raw length, target offset, target length
      std::vector<std::array<uint32_t, 4>> texts;  // source at, length, target at, length
      while (at.size() < max_pairs && b.raw.size() + b.raw_target.size() < max_bytes && left_ > 0) {
        PairHead h;
        SHEAF_TRY(read_exact(&h, sizeof h));
        // A part whose checksum matches may still be crafted: every field
        // that indexes something later is checked.
        bool drop_ok = h.drop_stage == kKept || h.drop_stage == kReadStage ||
                       (h.drop_stage >= 0 && static_cast<size_t>(h.drop_stage) < infos_[0].first_stage);
        if (h.corpus != plan_.parts[current_].corpus || !drop_ok || h.split < 0 || h.split >= max_split_ ||
            h.line == 0 || h.line > infos_[current_].lines)
          return Error(ErrorKind::kData, "the part holds a pair that cannot be one of its own (damaged); run its map "
                                         "job again",
                       Location{part_path(work_, current_, ".pairs"), 0, 0, read_bytes_});
        Pair pr;
        pr.line = h.line + offset_[current_];
        pr.corpus = h.corpus;
        pr.drop_stage = h.drop_stage;
        pr.split = h.split;
        pr.key = {h.key[0], h.key[1]};
        pr.words = {h.words[0], h.words[1]};
        pr.chars = {h.chars[0], h.chars[1]};
        std::string field;
        SHEAF_TRY(read_field(h.len[0], field));
        pr.reason = field;
        at.push_back({b.raw.size(), h.len[1], b.raw_target.size(), h.len[2]});
        SHEAF_TRY(read_field(h.len[1], field));
        b.raw += field;
        SHEAF_TRY(read_field(h.len[2], field));
        b.raw_target += field;
        uint32_t text_at[2] = {h.source_at, h.target_at};
        for (int s = 0; s < 2; ++s) {
          if (text_at[s] != kStored) {
            uint64_t base = s == 1 && h.len[2] > 0 ? h.len[2] : h.len[1];
            if (uint64_t{text_at[s]} + h.len[3 + s] > base)
              return Error(ErrorKind::kData, "the part places a text outside its line (damaged); run its map job again",
                           Location{part_path(work_, current_, ".pairs"), 0, 0, read_bytes_});
            continue;  // a view of the raw line, set below once the buffer stops moving
          }
          SHEAF_TRY(read_field(h.len[3 + s], field));
          pr.text[static_cast<size_t>(s)] = b.arena.copy(field);
        }
        texts.push_back({text_at[0], h.len[3], text_at[1], h.len[4]});
        if (!heap_.empty() && heap_.top().first == ordinal_) {
          size_t from = heap_.top().second;
          heap_.pop();
          const uint64_t first = verdicts_[from].row[1];
          if (!pr.kept())
            return Error(ErrorKind::kData, "a bucket's verdict names a pair that was dropped before it (damaged); run "
                                           "the bucket jobs again",
                         Location{bucket_path(work_, from, ".verdicts"), 0, 0, {}});
          pr.drop_stage = static_cast<int>(infos_[0].first_stage);
          pr.reason = keyed_->repeat_reason(static_cast<uint32_t>(first >> 48), first & kLineMask);
          SHEAF_TRY(advance(from));
        }
        ++ordinal_;
        b.pairs.push_back(std::move(pr));
        --left_;
      }
      for (size_t i = 0; i < at.size(); ++i) {
        Pair& pr = b.pairs[b.pairs.size() - at.size() + i];
        pr.raw = std::string_view(b.raw).substr(at[i][0], at[i][1]);
        pr.raw_target = std::string_view(b.raw_target).substr(at[i][2], at[i][3]);
        for (int s = 0; s < 2; ++s)
          if (texts[i][2 * s] != kStored)
            pr.text[static_cast<size_t>(s)] =
                text_base(pr.raw, pr.raw_target, s).substr(texts[i][2 * s], texts[i][2 * s + 1]);
      }
      if (left_ == 0) SHEAF_TRY(close_part());
      if (!b.pairs.empty()) return true;
    }
  }

  uint64_t consumed() const override { return consumed_; }
  void set_oversize_sink(const PairReader::OversizeSink& sink) override { sink_ = sink; }

  Result<std::vector<InputInfo>> inputs(size_t corpus) const override {
    std::vector<InputInfo> out;
    uint64_t lines = 0;
    const SpreadPart* cut = nullptr;
    for (size_t k = 0; k < plan_.parts.size(); ++k) {
      if (plan_.parts[k].corpus != corpus) continue;
      if (plan_.parts[k].whole) return infos_[k].inputs;
      cut = &plan_.parts[k];
      lines += infos_[k].lines;
    }
    if (!cut) return out;
    uint64_t size = 0;
    auto sum = checksum_file(cut->file, &size);
    if (!sum.ok()) return sum.error();
    if (size != cut->end)
      return Error(ErrorKind::kInput, "the input changed size since the run was planned; plan it again",
                   Location{cut->file, 0, 0, {}});
    out.push_back({cut->file, size, *sum, compression_name(Compression::kNone), lines});
    return out;
  }

  size_t first_stage() const override { return (infos_.empty() ? 0 : infos_[0].first_stage) + (keyed_ ? 1 : 0); }
  std::vector<std::pair<std::string, uint64_t>> counters(size_t stage) const override {
    if (keyed_ && stage == infos_[0].first_stage) {
      uint64_t distinct = 0;
      for (const auto& b : buckets_) distinct += b.distinct;
      return keyed_->counters_after(distinct);
    }
    std::vector<std::pair<std::string, uint64_t>> sum;
    for (const auto& info : infos_) {
      if (stage >= info.counters.size()) continue;
      const auto& cs = info.counters[stage];
      if (sum.empty()) {
        sum = cs;
        continue;
      }
      for (size_t i = 0; i < cs.size() && i < sum.size(); ++i)
        if (stage < stages_.size() && stages_[stage]->counter_adds(sum[i].first)) sum[i].second += cs[i].second;
    }
    return sum;
  }

 private:
  Status open_part(size_t k) {
    current_ = k;
    // The part's over-long lines first (they go to their own file, in order).
    if (infos_[k].long_bytes > 0) SHEAF_TRY(replay_long(k));
    std::string path = part_path(work_, k, ".pairs");
    in_ = std::fopen(path.c_str(), "rb");
    if (!in_) return Error(ErrorKind::kInput, "cannot read part: run its map job again", Location{path, 0, 0, {}});
    std::setvbuf(in_, nullptr, _IOFBF, 1 << 20);
    left_ = infos_[k].pairs;
    read_bytes_ = 0;
    if (!xxh_) xxh_.reset(XXH3_createState());
    XXH3_64bits_reset(xxh_.get());
    return {};
  }

  Status close_part() {
    std::fclose(in_);
    in_ = nullptr;
    std::string path = part_path(work_, current_, ".pairs");
    if (read_bytes_ != infos_[current_].pairs_bytes || XXH3_64bits_digest(xxh_.get()) != infos_[current_].pairs_checksum)
      return Error(ErrorKind::kData, "the part does not match its record (damaged or replaced); run its map job again",
                   Location{path, 0, 0, {}});
    return {};
  }

  Status read_exact(void* to, size_t n) {
    if (n > 0 && std::fread(to, 1, n, in_) != n)
      return Error(ErrorKind::kData, "the part ends early (damaged); run its map job again",
                   Location{part_path(work_, current_, ".pairs"), 0, 0, read_bytes_});
    XXH3_64bits_update(xxh_.get(), to, n);
    read_bytes_ += n;
    consumed_ += n;
    return {};
  }
  Status read_field(uint32_t n, std::string& out) {
    if (n > infos_[current_].pairs_bytes)
      return Error(ErrorKind::kData, "the part holds a field longer than itself (damaged); run its map job again",
                   Location{part_path(work_, current_, ".pairs"), 0, 0, read_bytes_});
    out.resize(n);
    return read_exact(out.data(), n);
  }

  Status replay_long(size_t k) {
    std::string path = part_path(work_, k, ".long");
    auto sum = checksum_file(path);
    if (!sum.ok()) return sum.error();
    if (*sum != infos_[k].long_checksum)
      return Error(ErrorKind::kData, "the part does not match its record; run its map job again", Location{path, 0, 0, {}});
    std::ifstream in(path, std::ios::binary);
    std::string side, bytes;
    for (;;) {
      char head[18];
      if (!in.read(head, sizeof head)) break;
      uint64_t line;
      uint32_t corpus, n;
      std::memcpy(&line, head, 8);
      std::memcpy(&corpus, head + 8, 4);
      std::memcpy(&n, head + 14, 4);
      side.resize(static_cast<unsigned char>(head[13]));
      bytes.resize(n);
      if (!in.read(side.data(), static_cast<std::streamsize>(side.size())) ||
          !in.read(bytes.data(), static_cast<std::streamsize>(n)))
        return Error(ErrorKind::kData, "the part ends early; run its map job again", Location{path, 0, 0, {}});
      if (sink_) SHEAF_TRY(sink_(corpus, side, line + offset_[k], bytes, head[12] != 0));
    }
    return {};
  }

  // The next verdict of bucket b onto the heap (none when it has no more).
  Status advance(size_t b) {
    Verdicts& v = verdicts_[b];
    if (v.left == 0) return {};
    SHEAF_TRY(v.in.read(v.row, sizeof v.row));
    --v.left;
    heap_.push({v.row[0], b});
    return {};
  }

  struct Verdicts {
    CheckedReader in;
    uint64_t left = 0;
    uint64_t row[2] = {0, 0};  // the pair's index in the input, where its key first appeared
  };
  std::vector<BucketInfo> buckets_;
  std::vector<std::unique_ptr<Stage>> stages_;
  const Stage* keyed_ = nullptr;
  std::vector<Verdicts> verdicts_;
  std::priority_queue<std::pair<uint64_t, size_t>, std::vector<std::pair<uint64_t, size_t>>, std::greater<>> heap_;
  uint64_t ordinal_ = 0;  // pairs handed out so far
  int32_t max_split_ = 1;  // splits a pair's split index may name

  struct XxhFree {
    void operator()(XXH3_state_t* s) const { XXH3_freeState(s); }
  };
  std::string work_;
  SpreadPlan plan_;
  std::vector<PartInfo> infos_;
  std::vector<uint64_t> offset_;
  PairReader::OversizeSink sink_;
  size_t next_part_ = 0, current_ = 0;
  FILE* in_ = nullptr;
  uint64_t left_ = 0, read_bytes_ = 0, consumed_ = 0;
  std::unique_ptr<XXH3_state_t, XxhFree> xxh_;
};

}  // namespace

Result<SpreadStatus> spread_status(const std::string& work) {
  auto plan = read_spread_plan(work);
  if (!plan.ok()) return plan.error();
  SpreadStatus s;
  s.parts = plan->parts.size();
  s.buckets = plan->buckets;
  for (size_t k = 0; k < s.parts; ++k)
    if (!part_done(work, k, *plan)) s.missing.push_back(k);
  for (size_t b = 0; b < s.buckets; ++b)
    if (!bucket_done(work, b, *plan)) s.missing_buckets.push_back(b);
  return s;
}

Status spread_bucket(const std::string& work, size_t bucket) {
  auto plan = read_spread_plan(work);
  if (!plan.ok()) return plan.error();
  if (bucket >= plan->buckets)
    return Error(ErrorKind::kUsage, "the plan has " + std::to_string(plan->buckets) + " buckets; --bucket " +
                                        std::to_string(bucket) + " is not one of them");
  auto infos = read_part_infos(work, *plan);
  if (!infos.ok()) return infos.error();
  std::vector<uint64_t> line0, pair0;
  part_starts(*plan, *infos, line0, pair0);
  JobLock lock;
  auto todo = lock.claim(bucket_path(work, bucket, ".lock"), "bucket job " + std::to_string(bucket),
                         [&] { return bucket_done(work, bucket, *plan); });
  if (!todo.ok()) return todo.error();
  if (!*todo) return {};
  std::error_code ec;
  for (const char* ext : {".json", ".verdicts"}) {
    fs::remove(bucket_path(work, bucket, ext), ec);
    fs::remove(bucket_path(work, bucket, ext) + ".partial", ec);
  }
  // The first pair of each key wins, in input order: parts in order, rows
  // in each part in order. The table is the dedup stage's own, holding
  // (corpus, line) of each key's first pair, so a repeat's reason names the
  // same line as in one run.
  OutputFile out;
  SHEAF_TRY(out.open(bucket_path(work, bucket, ".verdicts")));
  uint64_t distinct = 0, verdicts = 0;
  auto resolve = [&](auto& table) -> Status {
    const size_t words = plan->key_words, row_bytes = 8 * words + 16;
    std::vector<char> row(row_bytes);
    for (size_t k = 0; k < plan->parts.size(); ++k) {
      const PartInfo::Keys& keys = (*infos)[k].keys[bucket];
      if (keys.bytes != keys.rows * row_bytes)
        return plan_error(part_path(work, k, ".json"), "damaged part record (keys); run its map job again");
      CheckedReader in;
      SHEAF_TRY(in.open(keys_path(work, k, static_cast<uint32_t>(bucket)), keys.bytes, keys.checksum));
      for (uint64_t r = 0; r < keys.rows; ++r) {
        SHEAF_TRY(in.read(row.data(), row_bytes));
        uint64_t key[2] = {0, 0}, index = 0, origin = 0;
        std::memcpy(key, row.data(), 8 * words);
        std::memcpy(&index, row.data() + 8 * words, 8);
        std::memcpy(&origin, row.data() + 8 * words + 8, 8);
        uint64_t line = (origin & kLineMask) + line0[k];
        uint64_t here = (origin & ~kLineMask) | (line & kLineMask);
        if (uint64_t first = table.insert(key, here)) {
          uint64_t v[2] = {pair0[k] + index, first};
          out.write(std::string_view(reinterpret_cast<const char*>(v), sizeof v));
          ++verdicts;
        }
      }
      SHEAF_TRY(in.finish());
    }
    distinct = table.size();
    return {};
  };
  Status st;
  if (plan->key_words == 1) {
    DedupTable<1> table;
    st = resolve(table);
  } else {
    DedupTable<2> table;
    st = resolve(table);
  }
  if (st.ok()) st = out.commit();
  if (!st.ok()) {
    out.discard();
    return st;
  }
  json j{{"format", "sheaf-spread-bucket"},
         {"version", kFormat},
         {"bucket", bucket},
         {"pipeline_hash", hash_hex(plan->pipeline_hash)},
         {"plan", hash_hex(plan->id)},
         {"distinct", distinct},
         {"verdicts", verdicts},
         {"bytes", out.size()},
         {"checksum", hash_hex(out.checksum())}};
  return write_small(bucket_path(work, bucket, ".json"), j.dump(1) + "\n");
}

Result<RunRecord> spread_reduce(const std::string& work, RunOptions o) {
  auto plan = read_spread_plan(work);
  if (!plan.ok()) return plan.error();
  auto p = load_planned(*plan);
  if (!p.ok()) return p.error();
  auto infos = read_part_infos(work, *plan);
  if (!infos.ok()) return infos.error();
  std::vector<BucketInfo> buckets;
  for (size_t b = 0; b < plan->buckets; ++b) {
    auto info = read_bucket_info(work, b, *plan);
    if (!info.ok()) return info.error();
    buckets.push_back(*info);
  }
  o.inputs.clear();
  o.until.clear();
  // Fewer and smaller batches than one run's: unless a later stage holds a
  // table, this job's memory is the program and its batches in flight, and
  // its stages are cheap enough that it is no slower for them
  // (docs/performance.md, "Spread runs").
  o.batch_pairs = 512;
  o.batch_bytes = 512 << 10;
  o.batches_per_thread = 2;
  o.source = [&](const Pipeline& run_p) -> Result<std::unique_ptr<BatchSource>> {
    // The bucketed stage gives the repeats' reasons and its counters; it is
    // built from the runner's own copy of the pipeline, which outlives pass 1.
    const Stage* keyed = nullptr;
    auto built = build_streaming_stages(run_p);
    if (!built.ok()) return built.error();
    std::vector<std::unique_ptr<Stage>> stages = std::move(built.value());
    size_t at = (*infos)[0].first_stage;
    if (at > stages.size() || (at < stages.size() && stages[at]->has_reduce() == false) ||
        (at > 0 && stages[at - 1]->has_reduce()))
      return plan_error(part_path(work, 0, ".json"), "the parts were mapped by another build; run the map jobs again");
    if (plan->buckets > 0) {
      if (at >= stages.size() || stages[at]->first_of_key_words() != static_cast<int>(plan->key_words))
        return Error(ErrorKind::kInternal, "the plan's bucketed stage is not the pipeline's; plan the run again");
      keyed = stages[at].get();
    }
    auto src = std::make_unique<PartsSource>(work, *plan, *infos, buckets, std::move(stages), keyed);
    SHEAF_TRY(src->open_verdicts());
    return std::unique_ptr<BatchSource>(std::move(src));
  };
  return run_pipeline(*p, o);
}

namespace {

// Runs `n` jobs of this program (`args(i)` after its path), `jobs` at a
// time; fails naming the first that failed and the command that re-runs it.
Status run_jobs(const std::string& self, size_t n, int jobs,
                const std::function<std::vector<std::string>(size_t)>& args, const std::string& what) {
  if (jobs < 1) jobs = 1;
  size_t next = 0;
  std::vector<std::pair<pid_t, size_t>> running;
  std::optional<size_t> failed;
  auto stop_all = [&running] {
    for (const auto& r : running) ::kill(r.first, SIGTERM);
    for (const auto& r : running) {
      int status = 0;
      while (::waitpid(r.first, &status, 0) < 0 && errno == EINTR) {
      }
    }
    running.clear();
  };
  while ((next < n && !failed) || !running.empty()) {
    // A stop signal: the jobs running are stopped too (each removes its
    // unfinished files), and no more start.
    if (interrupt_requested().load()) {
      stop_all();
      return interrupted_error();
    }
    while (next < n && !failed && running.size() < static_cast<size_t>(jobs)) {
      std::vector<std::string> a = args(next);
      a.insert(a.begin(), self);
      std::vector<char*> argv;
      for (auto& x : a) argv.push_back(x.data());
      argv.push_back(nullptr);
      pid_t pid = 0;
      if (int e = posix_spawn(&pid, self.c_str(), nullptr, nullptr, argv.data(), environ); e != 0) {
        stop_all();
        return Error(ErrorKind::kIo, std::string("cannot start a job: ") + std::strerror(e), Location{self, 0, 0, {}});
      }
      running.emplace_back(pid, next++);
    }
    int status = 0;
    pid_t done = ::waitpid(-1, &status, 0);
    if (done < 0 && errno == EINTR) continue;
    if (done < 0) break;
    auto it = std::find_if(running.begin(), running.end(), [done](const auto& r) { return r.first == done; });
    if (it == running.end()) continue;
    if (!(WIFEXITED(status) && WEXITSTATUS(status) == 0) && (!failed || it->second < *failed)) failed = it->second;
    running.erase(it);
  }
  if (failed) {
    std::vector<std::string> a = args(*failed);
    std::string cmd = "sheaf";
    for (const auto& x : a) cmd += " " + x;
    return Error(ErrorKind::kData, what + " " + std::to_string(*failed) + " failed (its message is above); re-run it with `" +
                                       cmd + "`");
  }
  return {};
}

}  // namespace

Status spread_run_maps(const std::string& self, const std::string& work, int jobs, int threads) {
  auto plan = read_spread_plan(work);
  if (!plan.ok()) return plan.error();
  return run_jobs(
      self, plan->parts.size(), jobs,
      [&](size_t k) {
        std::vector<std::string> a = {"spread", "map", work, "--part", std::to_string(k)};
        if (threads > 0) a.insert(a.end(), {"--threads", std::to_string(threads)});
        return a;
      },
      "map job");
}

Status spread_run_buckets(const std::string& self, const std::string& work, int jobs) {
  auto plan = read_spread_plan(work);
  if (!plan.ok()) return plan.error();
  return run_jobs(
      self, plan->buckets, jobs,
      [&](size_t b) { return std::vector<std::string>{"spread", "bucket", work, "--bucket", std::to_string(b)}; },
      "bucket job");
}

Result<std::string> spread_slurm(const std::string& self, const std::string& work, int threads,
                                 const std::vector<std::string>& extra, const std::string& out_dir, bool submit) {
  auto plan = read_spread_plan(work);
  if (!plan.ok()) return plan.error();
  std::error_code ec;
  std::string abs_work = fs::absolute(work, ec).lexically_normal().string();
  auto quote = [](const std::string& s) {
    std::string q = "'";
    for (char c : s) q += c == '\'' ? std::string("'\\''") : std::string(1, c);
    return q + "'";
  };
  std::string header = "#!/bin/sh\n";
  // The jobs that wait on others are cancelled, not left pending for ever,
  // when a job before them fails (sbatch(1), --kill-on-invalid-dep); ahead
  // of the user's --sbatch lines, which can say otherwise.
  const std::string waits = "#SBATCH --kill-on-invalid-dep=yes\n";
  auto common = [&](const std::string& name, const char* log, bool waiting) {
    std::string h = header + "#SBATCH --job-name=" + name + "\n#SBATCH --cpus-per-task=" + std::to_string(threads) +
                    "\n#SBATCH --output=" + abs_work + "/logs/" + log + "\n" + (waiting ? waits : "");
    for (const auto& e : extra) h += "#SBATCH " + e + "\n";
    return h;
  };
  fs::create_directories(abs_work + "/logs", ec);
  std::string map = common("sheaf-map", "map-%A_%a.log", false) + "#SBATCH --array=0-" + std::to_string(plan->parts.size() - 1) +
                    "\nexec " + quote(self) + " spread map " + quote(abs_work) +
                    " --part \"$SLURM_ARRAY_TASK_ID\" --threads " + std::to_string(threads) + "\n";
  std::string reduce = common("sheaf-reduce", "reduce-%j.log", true) + "exec " + quote(self) + " spread reduce " + quote(abs_work) +
                       " --threads " + std::to_string(threads) + (out_dir.empty() ? "" : " --out " + quote(out_dir)) +
                       " --force\n";
  SHEAF_TRY(write_small(abs_work + "/map.sbatch", map));
  SHEAF_TRY(write_small(abs_work + "/reduce.sbatch", reduce));
  std::string cmds = "map=$(sbatch --parsable " + quote(abs_work + "/map.sbatch") + ")\n";
  std::string before = "${map%%;*}";
  if (plan->buckets > 0) {
    std::string bucket = common("sheaf-bucket", "bucket-%A_%a.log", true) + "#SBATCH --array=0-" +
                         std::to_string(plan->buckets - 1) + "\nexec " + quote(self) + " spread bucket " +
                         quote(abs_work) + " --bucket \"$SLURM_ARRAY_TASK_ID\"\n";
    SHEAF_TRY(write_small(abs_work + "/bucket.sbatch", bucket));
    cmds += "bucket=$(sbatch --parsable --dependency=afterok:${map%%;*} " + quote(abs_work + "/bucket.sbatch") + ")\n";
    before = "${bucket%%;*}";
  }
  cmds += "reduce=$(sbatch --parsable --dependency=afterok:" + before + " " + quote(abs_work + "/reduce.sbatch") +
          ")\necho \"map jobs: $map" + (plan->buckets > 0 ? "; bucket jobs: $bucket" : "") + "; reduce job: $reduce\"\n";
  if (!submit) return cmds;
  std::string script = abs_work + "/submit.sh";
  SHEAF_TRY(write_small(script, "#!/bin/sh\nset -e\n" + cmds));
  std::string run = "sh " + quote(script);
  FILE* pipe = ::popen(run.c_str(), "r");
  if (!pipe) return Error(ErrorKind::kIo, "cannot run sbatch");
  std::string out;
  char buf[256];
  while (size_t got = std::fread(buf, 1, sizeof buf, pipe)) out.append(buf, got);
  int rc = ::pclose(pipe);
  if (rc != 0)
    return Error(ErrorKind::kIo, "sbatch failed (is Slurm running? `sinfo` says); the scripts are in " + abs_work);
  return out;
}

}  // namespace sheaf
