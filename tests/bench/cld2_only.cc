// CLD2 alone on the same text, with the same threads: the yardstick for the
// language stage's overhead. Reads a TSV corpus, runs CLD2::DetectLanguage on
// every side of at least 20 letters in parallel batches, prints the seconds.
//   sheaf_cld2_only corpus.tsv THREADS
#include <oneapi/tbb/parallel_for.h>
#include <oneapi/tbb/task_arena.h>

#include <atomic>
#include <chrono>
#include <cstdio>
#include <fstream>
#include <string>
#include <vector>

#include "stages/language.h"

int main(int argc, char** argv) {
  if (argc != 3) {
    std::fprintf(stderr, "usage: sheaf_cld2_only corpus.tsv THREADS\n");
    return 2;
  }
  std::ifstream in(argv[1], std::ios::binary);
  std::vector<std::string> lines;
  std::string l;
  while (std::getline(in, l)) lines.push_back(std::move(l));
  int threads = std::atoi(argv[2]);
  auto start = std::chrono::steady_clock::now();
  std::atomic<uint64_t> reliable{0};
  tbb::task_arena arena(threads);
  arena.execute([&] {
    tbb::parallel_for(tbb::blocked_range<size_t>(0, lines.size(), 4096), [&](const tbb::blocked_range<size_t>& r) {
      uint64_t n = 0;
      for (size_t i = r.begin(); i < r.end(); ++i) {
        std::string_view line = lines[i];
        size_t tab = line.find('\t');
        for (std::string_view side : {line.substr(0, tab), tab == std::string_view::npos ? std::string_view{} : line.substr(tab + 1)}) {
          if (side.size() < 20) continue;
          n += sheaf::identify_language(side).reliable;
        }
      }
      reliable += n;
    });
  });
  double secs = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  std::printf("%.3f\n", secs);
  std::fprintf(stderr, "reliable verdicts: %llu\n", static_cast<unsigned long long>(reliable.load()));
  return 0;
}
