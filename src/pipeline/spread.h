// Spread: one run cut into jobs that share only a file system (a cluster's
// nodes, or processes on one machine), with outputs byte-identical to
// `sheaf run` of the same pipeline file. docs/cluster.md describes the flow
// and every file between the jobs.
//
//   plan     cuts each corpus's input into parts at line ends (an
//            uncompressed one-file corpus by byte ranges; any other corpus is
//            one part) and writes WORK/plan.json;
//   map K    reads part K, runs the streaming stages that need no state
//            shared across pairs (those before the first stage with a
//            reduce half), and writes WORK/parts/K.pairs, K.long and, last,
//            K.json (a part is complete or absent; re-running K replaces it);
//   bucket J when the first stateful stage keeps the first pair of each key
//            (dedup), the map jobs also write each kept pair's key into one
//            of B buckets by the key's hash; bucket job J finds, over every
//            part in input order, the first pair of each key in bucket J and
//            writes which pairs repeat one (WORK/buckets/J.verdicts, J.json);
//            its memory is its bucket's keys, not the corpus's;
//   reduce   reads the parts in input order, adds the lines of earlier parts
//            to each part's line numbers, applies the buckets' verdicts, and
//            runs the rest of the pipeline (the other stateful stages, pass
//            1's writer, the steps, the summary) exactly as `sheaf run` does,
//            into the run directory.
// The map jobs do the costly per-pair work (normalization, markup, script
// and language checks when they come before the first stateful stage); the
// reduce job's memory is that of a one-machine run's stateful stages.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "core/error.h"
#include "pipeline/runner.h"
#include "run/run_record.h"

namespace sheaf {

struct SpreadPart {
  uint32_t corpus = 0;
  bool whole = true;       // the corpus's files whole (any layout, compressed)
  std::string file;        // when cut: the one file, resolved
  uint64_t begin = 0, end = 0;  // when cut: bytes [begin, end), at line starts
};

struct SpreadPlan {
  std::string pipeline;            // the pipeline file, as given
  std::string cwd;                 // the directory the plan was made in: every job works there
  std::vector<std::string> sets;   // the --set overrides, as given
  uint64_t pipeline_hash = 0;      // of the resolved pipeline (render_pipeline)
  std::vector<SpreadPart> parts;   // in input order
  uint32_t buckets = 0;            // bucket jobs (0: the reduce job deduplicates)
  uint32_t key_words = 0;          // 64-bit words of the bucketed stage's key
  uint64_t id = 0;                 // XXH3-64 of plan.json: every job's record names it
};

// At most this many buckets: a map job writes one file per bucket, all open
// at once.
inline constexpr uint32_t kMaxBuckets = 1000;

// Paths: a job changes to the plan's directory before it loads the
// pipeline, so that the run reads and records the same paths as `sheaf run`
// from there; `work` and output directories are made absolute first.
//
// Loads `pipeline` with `sets` and cuts its inputs into about `parts` parts
// (at least one per corpus); writes WORK/plan.json and makes WORK/parts.
// `buckets`: how many bucket jobs decide the first stateful stage when it
// keeps the first pair of each key; 0 none (the reduce job does it, holding
// every key); -1 as many as keep each bucket's table within `job_mib` MiB
// (the input's lines estimated from its first MiB).
Result<SpreadPlan> spread_plan(const std::string& pipeline, const std::vector<std::string>& sets, int parts,
                               const std::string& work, int buckets = -1, uint64_t job_mib = 2048);
Result<SpreadPlan> read_spread_plan(const std::string& work);

// Runs map job `part` (from 0) of the plan in `work` on `threads`.
Status spread_map(const std::string& work, size_t part, int threads);

// Runs bucket job `bucket` (from 0), after every map job.
Status spread_bucket(const std::string& work, size_t bucket);

// Which parts and buckets are done (their record is there and names this
// plan).
struct SpreadStatus {
  size_t parts = 0, buckets = 0;
  std::vector<size_t> missing, missing_buckets;
};
Result<SpreadStatus> spread_status(const std::string& work);

// The reduce job: the rest of the run from the parts in `work`. `o` as for
// run_pipeline (out_dir, threads, force, closing steps); o.source and
// o.inputs are set here.
Result<RunRecord> spread_reduce(const std::string& work, RunOptions o);

// The map jobs as processes of `self` (this program) on this machine, `jobs`
// at a time, each on `threads`; fails naming the first part that failed.
Status spread_run_maps(const std::string& self, const std::string& work, int jobs, int threads);
// The bucket jobs likewise (nothing when the plan has none).
Status spread_run_buckets(const std::string& self, const std::string& work, int jobs);

// Job scripts for Slurm: WORK/map.sbatch (an array, one task a part),
// WORK/bucket.sbatch (an array, one task a bucket, when the plan has
// buckets) and WORK/reduce.sbatch, chained by afterok; `extra` lines go under the #SBATCH header of both
// (a partition, an account, a time limit). Returns the command lines that
// submit them chained (afterok); with `submit`, runs them.
Result<std::string> spread_slurm(const std::string& self, const std::string& work, int threads,
                                 const std::vector<std::string>& extra, const std::string& out_dir, bool submit);

}  // namespace sheaf
