// The near-duplicate stage measured, for docs/near-duplicates.md:
//   sheaf_near_dup_curve [TRIALS]
// 1. The share of set pairs of known Jaccard similarity s that share a band,
//    beside 1 - (1 - s^r)^b, for the default 15 bands of 11 rows.
// 2. Character against word shingles: the share of generated sentence pairs
//    found after each kind of edit (near-duplicates that should be found, and
//    pairs that differ in meaning that should not), and the time per pair.
// Everything is seeded; nothing asserts.
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <random>
#include <string>
#include <vector>

#include "stages/near_dup.h"

using namespace sheaf;

namespace {

bool same_band(const NearDupSketch& sk, const std::vector<uint32_t>& a, const std::vector<uint32_t>& b) {
  size_t n = static_cast<size_t>(sk.options().bands);
  std::vector<uint64_t> ka(n), kb(n);
  sk.band_keys(a, ka.data());
  sk.band_keys(b, kb.data());
  for (size_t i = 0; i < n; ++i)
    if (ka[i] == kb[i]) return true;
  return false;
}

void curve(int trials) {
  NearDupSketch sk{NearDupOptions{}};
  std::mt19937_64 rng(1);
  std::printf("| s | 1-(1-s^11)^15 | measured | trials |\n|---:|---:|---:|---:|\n");
  for (int shared = 0; shared <= 200; shared += 10) {
    int own = (200 - shared) / 2;
    double s = shared / 200.0;
    int hits = 0;
    for (int t = 0; t < trials; ++t) {
      std::vector<uint64_t> a, b;
      for (int i = 0; i < shared; ++i) {
        uint64_t h = rng();
        a.push_back(h);
        b.push_back(h);
      }
      for (int i = 0; i < own; ++i) a.push_back(rng());
      for (int i = 0; i < own; ++i) b.push_back(rng());
      auto sa = sk.empty(), sb = sk.empty();
      sk.add_hashes(a.data(), a.size(), sa);
      sk.add_hashes(b.data(), b.size(), sb);
      hits += same_band(sk, sa, sb);
    }
    std::printf("| %.2f | %.4f | %.4f | %d |\n", s, 1 - std::pow(1 - std::pow(s, 11), 15),
                static_cast<double>(hits) / trials, trials);
  }
}

// Generated sentences: words drawn from a Zipf-like list of invented words.
struct Gen {
  std::mt19937_64 rng{7};
  std::string word() {
    static const char* syl[] = {"ka", "lo", "mi", "ne", "ru", "ta", "vo", "si", "pe", "da", "fu", "go"};
    double u = std::uniform_real_distribution<double>(0, 1)(rng);
    uint64_t rank = static_cast<uint64_t>(std::pow(20000.0, u));  // log-uniform ranks
    std::string w;
    do {
      w += syl[rank % 12];
      rank /= 12;
    } while (rank);
    return w;
  }
  std::vector<std::string> sentence(int n) {
    std::vector<std::string> s;
    for (int i = 0; i < n; ++i) s.push_back(word());
    return s;
  }
};

std::string join(const std::vector<std::string>& w, const char* sep = " ") {
  std::string s;
  for (size_t i = 0; i < w.size(); ++i) s += (i ? sep : "") + w[i];
  return s;
}

void shingles(int n) {
  struct Edit {
    const char* name;
    bool should_find;
    std::string (*apply)(std::vector<std::string>, Gen&);
  };
  static const Edit edits[] = {
      {"punctuation, case and spacing", true,
       [](std::vector<std::string> w, Gen&) {
         w[0][0] = static_cast<char>(std::toupper(w[0][0]));
         return join(w, "  ") + "!";
       }},
      {"a number added", true,
       [](std::vector<std::string> w, Gen& g) {
         w.insert(w.begin() + static_cast<long>(w.size() / 2), std::to_string(g.rng() % 100));
         auto v = w;
         return join(v);
       }},
      {"a boilerplate prefix (3 words)", true,
       [](std::vector<std::string> w, Gen&) { return "read more here " + join(w); }},
      {"one word changed", true,
       [](std::vector<std::string> w, Gen& g) {
         w[g.rng() % w.size()] = g.word();
         return join(w);
       }},
      {"two words changed", false,
       [](std::vector<std::string> w, Gen& g) {
         w[g.rng() % w.size()] = g.word();
         w[g.rng() % w.size()] = g.word();
         return join(w);
       }},
      {"half the words changed", false,
       [](std::vector<std::string> w, Gen& g) {
         for (size_t i = 0; i < w.size(); i += 2) w[i] = g.word();
         return join(w);
       }},
      {"another sentence", false, [](std::vector<std::string> w, Gen& g) { return join(g.sentence(static_cast<int>(w.size()))); }},
  };
  struct Setting {
    const char* name;
    ShingleUnit unit;
    int size;
  };
  static const Setting settings[] = {{"words, 1", ShingleUnit::kWords, 1}, {"words, 2", ShingleUnit::kWords, 2},
                                     {"words, 3", ShingleUnit::kWords, 3}, {"chars, 3", ShingleUnit::kChars, 3},
                                     {"chars, 5", ShingleUnit::kChars, 5}};
  std::printf("\nShare found (pairs of %d-word sentences, source edited, target identical; %d pairs each):\n\n", 13, n);
  std::printf("| edit | should be found |");
  for (const auto& s : settings) std::printf(" %s |", s.name);
  std::printf("\n|---|---|");
  for (size_t i = 0; i < std::size(settings); ++i) std::printf("---:|");
  std::printf("\n");
  for (const auto& e : edits) {
    std::printf("| %s | %s |", e.name, e.should_find ? "yes" : "no");
    for (const auto& st : settings) {
      NearDupOptions o;
      o.unit = st.unit;
      o.shingle_size = st.size;
      NearDupSketch sk{o};
      Gen g;
      int found = 0;
      std::string ca, cb;
      for (int i = 0; i < n; ++i) {
        auto src = g.sentence(13);
        auto tgt = join(g.sentence(14));
        std::string edited = e.apply(src, g);
        auto sa = sk.empty(), sb = sk.empty();
        NearDupSketch::canonical(join(src), ca);
        sk.add(ca, 1, sa);
        NearDupSketch::canonical(tgt, cb);
        sk.add(cb, 2, sa);
        NearDupSketch::canonical(edited, ca);
        sk.add(ca, 1, sb);
        sk.add(cb, 2, sb);
        found += same_band(sk, sa, sb);
      }
      std::printf(" %.3f |", static_cast<double>(found) / n);
    }
    std::printf("\n");
  }
  std::printf("\nTime per pair (signature and band keys of both sides, one thread):\n\n| shingles | ns per pair |\n|---|---:|\n");
  for (const auto& st : settings) {
    NearDupOptions o;
    o.unit = st.unit;
    o.shingle_size = st.size;
    NearDupSketch sk{o};
    Gen g;
    std::vector<std::string> texts;
    for (int i = 0; i < 20000; ++i) texts.push_back(join(g.sentence(13)));
    std::vector<uint64_t> keys(15);
    std::string c;
    auto t0 = std::chrono::steady_clock::now();
    uint64_t sink = 0;
    for (size_t i = 0; i + 1 < texts.size(); i += 2) {
      auto sig = sk.empty();
      NearDupSketch::canonical(texts[i], c);
      sk.add(c, 1, sig);
      NearDupSketch::canonical(texts[i + 1], c);
      sk.add(c, 2, sig);
      sk.band_keys(sig, keys.data());
      sink += keys[0];
    }
    double ns = std::chrono::duration<double, std::nano>(std::chrono::steady_clock::now() - t0).count() / 10000;
    std::printf("| %s | %.0f |%s\n", st.name, ns, sink == 42 ? " " : "");
  }
}

}  // namespace

int main(int argc, char** argv) {
  int trials = argc > 1 ? std::atoi(argv[1]) : 10000;
  curve(trials);
  shingles(trials / 5);
  return 0;
}
