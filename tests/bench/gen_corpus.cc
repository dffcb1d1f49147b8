// A seeded generator of a realistic noisy bilingual corpus for benchmarks.
//
//   sheaf_gen_corpus --mb 200 --seed 1 [--scripts latin|cyrillic] > corpus.tsv
//
// Words are drawn from a Zipf distribution (exponent 1.07) over 4 million
// ranks per side, so that a 200 MB corpus holds over a million distinct word
// types per side; sentence lengths follow a log-normal distribution (median
// about 13 words). The target "translates" the source word by word through a
// fixed permutation of ranks, with its own spelling (Spanish-like letters
// with accents, or Cyrillic), and slightly reordered. Damage at fixed rates:
// 20% repeats of an earlier pair, 3% untranslated (target = source), 2%
// wrong language on one side, 1% overlong, 1% an empty side, 2% HTML, 1% odd
// whitespace and invisible characters, 0.2% invalid UTF-8. Deterministic:
// the same arguments write the same bytes.
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <random>
#include <string>
#include <vector>

namespace {

constexpr uint64_t kRanks = 4'000'000;
constexpr double kZipf = 1.07;

// Rejection-inversion sampling of a Zipf distribution (Hörmann and
// Derflinger, 1996), so no table of 4 million probabilities is needed.
class Zipf {
 public:
  Zipf(uint64_t n, double s) : n_(static_cast<double>(n)), s_(s) {
    h_x1_ = h(1.5) - 1.0;
    h_n_ = h(n_ + 0.5);
    k_ = 2.0 - h_inv(h(2.5) - std::pow(2.0, -s_));
  }
  uint64_t operator()(std::mt19937_64& rng) {
    std::uniform_real_distribution<double> u(0.0, 1.0);
    for (;;) {
      double x = h_n_ + u(rng) * (h_x1_ - h_n_);
      double k = std::floor(h_inv(x) + 0.5);
      if (k - h_inv(x) <= k_ || x >= h(k + 0.5) - std::pow(k, -s_)) return static_cast<uint64_t>(k) - 1;
    }
  }

 private:
  double h(double x) const { return (std::pow(x, 1.0 - s_) - 1.0) / (1.0 - s_); }
  double h_inv(double x) const { return std::pow(x * (1.0 - s_) + 1.0, 1.0 / (1.0 - s_)); }
  double n_, s_, h_x1_, h_n_, k_;
};

const char* kSrcSyl[] = {"ka", "lo", "mi", "ne", "ro", "ta", "vi", "su", "pe", "da", "gri", "sto", "ble", "wan",
                         "ther", "ing", "ed", "er", "on", "al", "st", "fr", "sh", "ch", "ly", "ow", "ai", "ea"};
const char* kLatSyl[] = {"ca", "lo", "mí", "ne", "rra", "ta", "vi", "su", "pe", "dá", "gri", "ño", "ble", "zón",
                         "ción", "al", "es", "ar", "ón", "qué", "lla", "ue", "ie", "to", "mu", "ja", "ré", "ba"};
const char* kCyrSyl[] = {"ка", "ло", "ми", "не", "ро", "та", "ви", "су", "пе", "да", "гри", "ще", "бле", "жан",
                         "ция", "ал", "ес", "ар", "он", "ый", "ля", "ую", "ие", "то", "му", "я", "рэ", "ба"};

std::string spell(uint64_t r, const char* const* syl) {
  std::string w;
  uint64_t x = r + 1;
  do {
    w += syl[x % 28];
    x /= 28;
  } while (x > 0);
  return w;
}

}  // namespace

int main(int argc, char** argv) {
  double mb = 10;
  uint64_t seed = 1;
  bool cyrillic = false;
  for (int i = 1; i < argc; ++i) {
    if (!std::strcmp(argv[i], "--mb") && i + 1 < argc) mb = std::atof(argv[++i]);
    else if (!std::strcmp(argv[i], "--seed") && i + 1 < argc) seed = std::strtoull(argv[++i], nullptr, 10);
    else if (!std::strcmp(argv[i], "--scripts") && i + 1 < argc) cyrillic = !std::strcmp(argv[++i], "cyrillic");
    else {
      std::fprintf(stderr, "usage: sheaf_gen_corpus --mb N [--seed S] [--scripts latin|cyrillic]\n");
      return 2;
    }
  }
  std::mt19937_64 rng(seed);
  Zipf zipf(kRanks, kZipf);
  std::lognormal_distribution<double> len(std::log(13.0), 0.55);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  const char* const* tsyl = cyrillic ? kCyrSyl : kLatSyl;
  const uint64_t target_bytes = static_cast<uint64_t>(mb * 1e6);
  uint64_t written = 0;
  std::vector<std::string> recent;  // earlier pairs, for repeats
  recent.reserve(1 << 16);
  std::string line, src, tgt;
  std::vector<uint64_t> ranks;
  while (written < target_bytes) {
    double d = u(rng);
    if (d < 0.20 && !recent.empty()) {
      line = recent[rng() % recent.size()];
    } else {
      int n = std::max(1, static_cast<int>(len(rng)));
      if (u(rng) < 0.01) n *= 30;  // overlong
      ranks.clear();
      for (int k = 0; k < n; ++k) ranks.push_back(zipf(rng));
      src.clear();
      tgt.clear();
      for (int k = 0; k < n; ++k) {
        if (k) src += ' ';
        std::string w = spell(ranks[static_cast<size_t>(k)], kSrcSyl);
        if (k == 0) w[0] = static_cast<char>(w[0] - 32);
        src += w;
      }
      src += '.';
      // The "translation": permuted ranks, neighbours swapped now and then.
      for (int k = 0; k < n; ++k) {
        int at = (k + 1 < n && (ranks[static_cast<size_t>(k)] & 7) == 0) ? k + 1 : (k > 0 && (ranks[static_cast<size_t>(k - 1)] & 7) == 0) ? k - 1 : k;
        uint64_t r = (ranks[static_cast<size_t>(at)] * 2654435761ULL) % kRanks;
        if (r > 50000) r = ranks[static_cast<size_t>(at)];  // frequent words stay frequent
        if (k) tgt += ' ';
        tgt += spell(r, tsyl);
      }
      tgt += '.';
      double e = u(rng);
      if (e < 0.03) tgt = src;                                                   // untranslated
      else if (e < 0.05) tgt = spell(rng() % 1000, cyrillic ? kLatSyl : kCyrSyl) + " " + spell(rng() % 900, cyrillic ? kLatSyl : kCyrSyl) + " " + tgt.substr(0, tgt.size() / 3);  // wrong language
      else if (e < 0.06) (rng() & 1 ? src : tgt).clear();                       // empty side
      else if (e < 0.08) src = "<p>" + src + "</p>", tgt = "<p>" + tgt + "</p>&nbsp;";  // HTML
      else if (e < 0.09) src = "  " + src + "\xC2\xA0", tgt = "\xE2\x80\x8B" + tgt + " \xE3\x80\x80";  // whitespace, invisibles
      else if (e < 0.092) tgt += "\xC3\x28";                                    // invalid UTF-8
      line = src + '\t' + tgt;
      if (recent.size() < (1 << 16)) recent.push_back(line);
      else recent[rng() % recent.size()] = line;
    }
    line += '\n';
    std::fwrite(line.data(), 1, line.size(), stdout);
    written += line.size();
  }
  return 0;
}
