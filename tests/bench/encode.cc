// Times encoding a TSV corpus (both columns):
//   sheaf_bench_encode corpus.tsv vocab.txt THREADS     with a vocabulary file,
//                                                       from an empty cache
//   sheaf_bench_encode corpus.tsv --learn SIZE THREADS  as the shard step does
//     after learning: a shared vocabulary of SIZE learned on the corpus, the
//     encoder started from the learner's units (that start is timed apart)
// prints: seconds, MB/s of text, tokens (and, with --learn, the seconds of
// starting the encoder). The corpus is read into memory first; only encoding
// is timed (in parallel over blocks of lines).
#include <oneapi/tbb/blocked_range.h>
#include <oneapi/tbb/parallel_for.h>
#include <oneapi/tbb/parallel_reduce.h>
#include <oneapi/tbb/task_arena.h>

#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "subword/codec.h"
#include "subword/trainer.h"

int main(int argc, char** argv) {
  if (argc != 4 && !(argc == 5 && std::string(argv[2]) == "--learn")) {
    std::fprintf(stderr, "usage: sheaf_bench_encode corpus.tsv (vocab.txt | --learn SIZE) THREADS\n");
    return 2;
  }
  const bool learn = argc == 5;
  const int threads = std::atoi(argv[argc - 1]);
  sheaf::LearnedUnits units;
  sheaf::Result<sheaf::Vocabulary> v = sheaf::Vocabulary();
  if (learn) {
    sheaf::TrainOptions o;
    o.size = static_cast<size_t>(std::atol(argv[3]));
    o.threads = threads;
    o.specials = {"p", "u", "b", "e"};
    o.side = "shared";
    v = sheaf::train_vocabulary({argv[1]}, {0, 1}, o, nullptr, &units);
  } else {
    v = sheaf::Vocabulary::load(argv[2]);
  }
  if (!v.ok()) {
    std::fprintf(stderr, "%s\n", v.error().describe().c_str());
    return 1;
  }
  std::ifstream in(argv[1], std::ios::binary);
  std::stringstream buf;
  buf << in.rdbuf();
  const std::string text = buf.str();
  std::vector<std::string_view> sides;
  for (size_t at = 0; at < text.size();) {
    size_t nl = text.find('\n', at);
    if (nl == std::string::npos) nl = text.size();
    std::string_view line(text.data() + at, nl - at);
    size_t tab = line.find('\t');
    sides.push_back(line.substr(0, tab));
    if (tab != std::string_view::npos) sides.push_back(line.substr(tab + 1));
    at = nl + 1;
  }
  sheaf::Encoder enc(*v, SIZE_MAX, learn ? text.size() : 0);
  tbb::task_arena arena(threads);
  auto start = std::chrono::steady_clock::now();
  arena.execute([&] {
    tbb::parallel_for(tbb::blocked_range<size_t>(0, units.size(), 1 << 14), [&](const tbb::blocked_range<size_t>& r) {
      std::string unit;
      for (size_t k = r.begin(); k < r.end(); ++k)
        if (units.text_of(k, *v, unit)) enc.remember(unit, units.ids_of(k));
    });
  });
  auto t0 = std::chrono::steady_clock::now();
  uint64_t tokens = arena.execute([&] {
    return tbb::parallel_reduce(
        tbb::blocked_range<size_t>(0, sides.size(), 4096), uint64_t{0},
        [&](const tbb::blocked_range<size_t>& r, uint64_t n) {
          std::vector<uint32_t> ids;
          for (size_t i = r.begin(); i < r.end(); ++i) {
            ids.clear();
            enc.encode(sides[i], ids);
            n += ids.size();
          }
          return n;
        },
        [](uint64_t a, uint64_t b) { return a + b; });
  });
  double s = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  std::printf("%.3f s %.1f MB/s %llu tokens", s, static_cast<double>(text.size()) / 1e6 / s,
              static_cast<unsigned long long>(tokens));
  if (learn)
    std::printf(", started from %zu learned units in %.3f s", units.size(),
                std::chrono::duration<double>(t0 - start).count());
  std::printf("\n");
  return 0;
}
