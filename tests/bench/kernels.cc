// Micro-benchmarks of the hot kernels (Google Benchmark). Figures go to
// docs/performance.md; nothing here is a test.
#include <benchmark/benchmark.h>
#include <xxhash.h>

#include <random>
#include <string>
#include <vector>

#include "core/text.h"
#include "stages/dedup_table.h"
#include "stages/normalize.h"
#include "stages/script.h"
#include "subword/codec.h"
#include "subword/units.h"

namespace {

using namespace sheaf;

const std::string kAscii = "The garden opens at nine in the morning and closes at sunset, every day.";
const std::string kLatin = "El jardín abre a las nueve de la mañana y cierra al atardecer, todos los días.";
const std::string kDecomposed = "El jardi\u0301n abre a las nueve de la man\u0303ana y cierra al atardecer.";

void BM_NormalizeAsciiClean(benchmark::State& st) {
  TextNormalizer n(NormalizeOptions{});
  std::string out;
  for (auto _ : st) benchmark::DoNotOptimize(n.apply(kAscii, 0, out, nullptr));
  st.SetBytesProcessed(static_cast<int64_t>(st.iterations() * kAscii.size()));
}
BENCHMARK(BM_NormalizeAsciiClean);

void BM_NormalizeLatinNfkc(benchmark::State& st) {
  NormalizeOptions o;
  o.form[0] = NormalForm::kNfkc;
  TextNormalizer n(o);
  std::string out;
  for (auto _ : st) benchmark::DoNotOptimize(n.apply(kLatin, 0, out, nullptr));
  st.SetBytesProcessed(static_cast<int64_t>(st.iterations() * kLatin.size()));
}
BENCHMARK(BM_NormalizeLatinNfkc);

void BM_NormalizeDecomposedNfc(benchmark::State& st) {
  TextNormalizer n(NormalizeOptions{});
  std::string out;
  for (auto _ : st) benchmark::DoNotOptimize(n.apply(kDecomposed, 0, out, nullptr));
  st.SetBytesProcessed(static_cast<int64_t>(st.iterations() * kDecomposed.size()));
}
BENCHMARK(BM_NormalizeDecomposedNfc);

void BM_Xxh3Sentence(benchmark::State& st) {
  for (auto _ : st) benchmark::DoNotOptimize(XXH3_64bits(kLatin.data(), kLatin.size()));
  st.SetBytesProcessed(static_cast<int64_t>(st.iterations() * kLatin.size()));
}
BENCHMARK(BM_Xxh3Sentence);

// Inserts into a table of st.range(0) distinct keys; reports bytes per key.
void BM_DedupInsert(benchmark::State& st) {
  const size_t n = static_cast<size_t>(st.range(0));
  std::mt19937_64 rng(1);
  std::vector<uint64_t> keys(n);
  for (auto& k : keys) k = rng();
  double bytes_per_key = 0;
  for (auto _ : st) {
    DedupTable<1> t;
    for (size_t i = 0; i < n; ++i) benchmark::DoNotOptimize(t.insert(&keys[i], i + 1));
    bytes_per_key = static_cast<double>(t.memory_bytes()) / static_cast<double>(t.size());
  }
  st.SetItemsProcessed(static_cast<int64_t>(st.iterations() * n));
  st.counters["bytes_per_key"] = bytes_per_key;
}
BENCHMARK(BM_DedupInsert)->Arg(1 << 20)->Arg(3 << 20)->Arg(6 << 20)->Unit(benchmark::kMillisecond);

void BM_DedupInsert128(benchmark::State& st) {
  const size_t n = static_cast<size_t>(st.range(0));
  std::mt19937_64 rng(1);
  std::vector<uint64_t> keys(2 * n);
  for (auto& k : keys) k = rng();
  double bytes_per_key = 0;
  for (auto _ : st) {
    DedupTable<2> t;
    for (size_t i = 0; i < n; ++i) benchmark::DoNotOptimize(t.insert(&keys[2 * i], i + 1));
    bytes_per_key = static_cast<double>(t.memory_bytes()) / static_cast<double>(t.size());
  }
  st.SetItemsProcessed(static_cast<int64_t>(st.iterations() * n));
  st.counters["bytes_per_key"] = bytes_per_key;
}
BENCHMARK(BM_DedupInsert128)->Arg(1 << 20)->Arg(3 << 20)->Unit(benchmark::kMillisecond);

void BM_ScriptRatio(benchmark::State& st) {
  std::vector<UScriptCode> latin = {USCRIPT_LATIN};
  for (auto _ : st) benchmark::DoNotOptimize(count_scripts(kLatin, latin));
  st.SetBytesProcessed(static_cast<int64_t>(st.iterations() * kLatin.size()));
}
BENCHMARK(BM_ScriptRatio);

void BM_CountWords(benchmark::State& st) {
  for (auto _ : st) benchmark::DoNotOptimize(count_words(kLatin));
  st.SetBytesProcessed(static_cast<int64_t>(st.iterations() * kLatin.size()));
}
BENCHMARK(BM_CountWords);

void BM_CountWordsAscii(benchmark::State& st) {
  for (auto _ : st) benchmark::DoNotOptimize(count_words(kAscii));
  st.SetBytesProcessed(static_cast<int64_t>(st.iterations() * kAscii.size()));
}
BENCHMARK(BM_CountWordsAscii);

void BM_CutUnits(benchmark::State& st) {
  size_t n = 0;
  for (auto _ : st) cut_units(kLatin, false, [&](std::string_view u) { n += u.size(); });
  benchmark::DoNotOptimize(n);
  st.SetBytesProcessed(static_cast<int64_t>(st.iterations() * kLatin.size()));
}
BENCHMARK(BM_CutUnits);

}  // namespace

BENCHMARK_MAIN();
