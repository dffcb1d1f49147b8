// Micro-benchmarks of the hot kernels (Google Benchmark). Figures go to
// docs/performance.md; nothing here is a test.
#include <benchmark/benchmark.h>
#include <xxhash.h>

#include <cstdio>
#include <random>
#include <string>
#include <vector>

#include "core/text.h"
#include "stages/copy.h"
#include "stages/dedup_table.h"
#include "stages/normalize.h"
#include "stages/script.h"
#include "subword/codec.h"
#include "subword/trainer.h"
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

// What the script stage runs: the table built once per stage.
void BM_ScriptTable(benchmark::State& st) {
  ScriptTable table({USCRIPT_LATIN});
  for (auto _ : st) {
    benchmark::DoNotOptimize(table.count(kLatin));
    benchmark::DoNotOptimize(table.count(kAscii));
  }
  st.SetBytesProcessed(static_cast<int64_t>(st.iterations() * (kLatin.size() + kAscii.size())));
}
BENCHMARK(BM_ScriptTable);

// The copy stage's first test of a pair that is a translation.
void BM_CopyBound(benchmark::State& st) {
  for (auto _ : st) benchmark::DoNotOptimize(trigram_overlap_bound(kAscii, kLatin, 0.8));  // the default max_overlap
  st.SetBytesProcessed(static_cast<int64_t>(st.iterations() * (kLatin.size() + kAscii.size())));
}
BENCHMARK(BM_CopyBound);

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

// BPE encoding of words the encoder has not seen (its cache is full of
// others): a vocabulary of 4,000 tokens learned on generated words, then
// 100,000 other generated words encoded in turn.
void BM_EncodeNewWord(benchmark::State& st) {
  std::mt19937 rng(4);
  const char* syllables[] = {"jar", "din", "flo", "res", "ma", "na", "ci", "er", "ra", "te", "ol", "mo", "pi", "ne"};
  auto word = [&] {
    std::string w = " ";
    for (int k = 0, n = 2 + static_cast<int>(rng() % 3); k < n; ++k) w += syllables[rng() % 14];
    return w;
  };
  std::string path = "/tmp/sheaf_kernels_train.tsv";
  {
    std::string text;
    for (int i = 0; i < 20000; ++i) text += word() + word() + "\t" + word() + "\n";
    FILE* f = std::fopen(path.c_str(), "wb");
    std::fwrite(text.data(), 1, text.size(), f);
    std::fclose(f);
  }
  TrainOptions o;
  o.size = 4000;
  o.specials = {"p", "u", "b", "e"};
  auto v = train_vocabulary({path}, {0, 1}, o, nullptr);
  std::remove(path.c_str());
  if (!v.ok()) {
    st.SkipWithError(v.error().describe().c_str());
    return;
  }
  std::vector<std::string> words;
  for (int i = 0; i < 100000; ++i) words.push_back(word() + word());
  Encoder enc(*v, SIZE_MAX, 1);  // the smallest cache: full after 3,072 words
  std::vector<uint32_t> ids;
  size_t i = 0, bytes = 0;
  for (auto _ : st) {
    const std::string& w = words[i++ % words.size()];
    ids.clear();
    enc.encode(w, ids);
    benchmark::DoNotOptimize(ids.data());
    bytes += w.size();
  }
  st.SetBytesProcessed(static_cast<int64_t>(bytes));
}
BENCHMARK(BM_EncodeNewWord);

}  // namespace

BENCHMARK_MAIN();
