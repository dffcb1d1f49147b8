// Times the two phases of learning a vocabulary on a TSV corpus:
//   sheaf_bench_learn corpus.tsv SIZE THREADS
// prints: word-unit counting seconds, merge-phase seconds, word types, merges.
// With SHEAF_BENCH_PROGRESS set, learning reports its progress on stderr.
#include <cstdio>
#include <cstdlib>

#include "subword/trainer.h"

int main(int argc, char** argv) {
  if (argc != 4) {
    std::fprintf(stderr, "usage: sheaf_bench_learn corpus.tsv SIZE THREADS\n");
    return 2;
  }
  sheaf::TrainOptions o;
  o.size = static_cast<size_t>(std::atol(argv[2]));
  o.threads = std::atoi(argv[3]);
  o.specials = {"p", "u", "b", "e"};
  o.side = "shared";
  o.progress = std::getenv("SHEAF_BENCH_PROGRESS") != nullptr;
  sheaf::TrainReport r;
  auto v = sheaf::train_vocabulary({argv[1]}, {0, 1}, o, &r);
  if (!v.ok()) {
    std::fprintf(stderr, "%s\n", v.error().describe().c_str());
    return 1;
  }
  std::printf("%.3f %.3f %llu %zu\n", r.count_seconds, r.merge_seconds, static_cast<unsigned long long>(r.word_types), r.merges);
  return 0;
}
