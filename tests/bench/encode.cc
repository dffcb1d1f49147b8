// Times encoding a TSV corpus (both columns) with a vocabulary file:
//   sheaf_bench_encode corpus.tsv vocab.txt THREADS
// prints: seconds, MB/s of text, tokens. The corpus is read into memory
// first; only encoding is timed (in parallel over blocks of lines).
#include <oneapi/tbb/blocked_range.h>
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

int main(int argc, char** argv) {
  if (argc != 4) {
    std::fprintf(stderr, "usage: sheaf_bench_encode corpus.tsv vocab.txt THREADS\n");
    return 2;
  }
  auto v = sheaf::Vocabulary::load(argv[2]);
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
  sheaf::Encoder enc(*v);
  tbb::task_arena arena(std::atoi(argv[3]));
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
  std::printf("%.3f s %.1f MB/s %llu tokens\n", s, static_cast<double>(text.size()) / 1e6 / s,
              static_cast<unsigned long long>(tokens));
  return 0;
}
