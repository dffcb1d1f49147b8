#include "stages/copy.h"

#include <unicode/uchar.h>
#include <unicode/utf8.h>

#include <algorithm>
#include <cmath>
#include <vector>

#include "core/text.h"
#include "core/utf8.h"
#include "stages/own_text.h"

namespace sheaf {

namespace {

// Lowercased code points of `s` into `out` (reused, so no allocation per pair).
void code_points(std::string_view s, std::vector<UChar32>& out) {
  out.clear();
  out.reserve(s.size());
  Utf8Cursor u(s);
  while (!u.done()) {
    if (u.byte() < 0x80) {
      unsigned char c = u.take();
      out.push_back(c >= 'A' && c <= 'Z' ? c + 32 : c);
      continue;
    }
    UChar32 c = u.next();
    out.push_back(c < 0 ? 0xFFFD : u_tolower(c));
  }
}

inline uint64_t trigram(const std::vector<UChar32>& v, size_t k) {
  return (static_cast<uint64_t>(v[k]) << 42) | (static_cast<uint64_t>(v[k + 1]) << 21) |
         static_cast<uint64_t>(v[k + 2]);
}

}  // namespace

double trigram_overlap_bound(std::string_view a, std::string_view b, double stop_at, size_t chars_a, size_t chars_b) {
  // Only trigrams of three ASCII characters are compared, on bytes: the
  // windows of `b` whose trigram is in a 4096-bit set of `a`'s (hashed, so
  // collisions can only add matches) bound the common ASCII trigrams, as
  // does the number of `a`'s; trigrams holding a non-ASCII character are
  // assumed to match as often as they could. So the result is never below
  // the exact value. U+0130 and U+212A, the only non-ASCII characters whose
  // lowercase is ASCII, take the exact path.
  auto special = [](std::string_view s) {
    return s.find("\xC4\xB0") != std::string_view::npos || s.find("\xE2\x84\xAA") != std::string_view::npos;
  };
  if (special(a) || special(b)) return trigram_overlap(a, b);
  size_t ca = chars_a != SIZE_MAX ? chars_a : count_code_points(a);
  size_t cb = chars_b != SIZE_MAX ? chars_b : count_code_points(b);
  if (ca < 3 || cb < 3) return a == b ? 1.0 : 0.0;
  size_t nx = ca - 2, ny = cb - 2;
  uint64_t set[64] = {};
  auto lower = [](uint32_t c) { return c | (static_cast<uint32_t>(c - 'A' < 26) << 5); };
  auto slot = [](uint32_t key) { return (key * 2654435761u) >> 20; };
  // Calls fn(key) for every window of three ASCII bytes until fn returns
  // true; returns the number of windows seen.
  auto windows = [&](std::string_view s, auto&& fn) {
    size_t run = 0, n = 0;
    uint32_t key = 0;
    for (unsigned char c : s) {
      if (c >= 0x80) {
        run = 0;
        continue;
      }
      key = ((key << 8) | lower(c)) & 0xFFFFFF;
      if (++run >= 3) {
        ++n;
        if (fn(key)) break;
      }
    }
    return n;
  };
  size_t ascii_a = windows(a, [&](uint32_t k) {
    set[slot(k) >> 6] |= uint64_t{1} << (slot(k) & 63);
    return false;
  });
  // Each window of `b` whose trigram is not in the set is one of b's ny
  // trigrams that matches none of a's, so at most ny - misses match: once
  // that is at most stop_at's share, the rest of `b` cannot change the
  // caller's decision.
  const double limit = stop_at * static_cast<double>(nx + ny) / 2.0;
  // The least number of misses m >= 1 with ny - m <= limit (the test as
  // written, so that rounding cannot move it), or ny + 1 for none: hits and
  // misses are then counted without a branch per window, which a
  // translation's windows, half hits and half misses, kept mispredicting.
  auto enough = [&](size_t m) { return static_cast<double>(ny - m) <= limit; };
  size_t stop_misses = ny + 1;
  if (ny >= 1 && enough(ny)) {
    double guess = std::ceil(static_cast<double>(ny) - limit);
    size_t m = guess <= 1.0 ? 1 : std::min(ny, static_cast<size_t>(guess));
    while (m > 1 && enough(m - 1)) --m;
    while (!enough(m)) ++m;
    stop_misses = m;
  }
  size_t hits = 0, misses = 0;
  bool stopped = false;
  size_t ascii_b = windows(b, [&](uint32_t k) {
    size_t hit = (set[slot(k) >> 6] >> (slot(k) & 63)) & 1;
    hits += hit;
    misses += hit ^ 1;
    return stopped = misses >= stop_misses;
  });
  if (stopped) return 2.0 * static_cast<double>(ny - misses) / static_cast<double>(nx + ny);
  size_t common = std::min(hits, ascii_a) + std::min(nx - ascii_a, ny - ascii_b);
  return 2.0 * static_cast<double>(common) / static_cast<double>(nx + ny);
}

double trigram_overlap(std::string_view a, std::string_view b) {
  thread_local std::vector<UChar32> x, y;
  thread_local std::vector<std::pair<uint64_t, uint32_t>> table;  // open addressing: trigram -> count
  code_points(a, x);
  code_points(b, y);
  if (x.size() < 3 || y.size() < 3) return a == b ? 1.0 : 0.0;
  size_t nx = x.size() - 2, ny = y.size() - 2;
  size_t cap = 16;
  while (cap < 2 * nx) cap <<= 1;
  table.assign(cap, {0, 0});
  size_t mask = cap - 1;
  for (size_t k = 0; k < nx; ++k) {
    uint64_t t = trigram(x, k) + 1;  // 0 marks an empty slot
    size_t i = (t * 0x9E3779B97F4A7C15ULL) >> 40 & mask;
    while (table[i].first != 0 && table[i].first != t) i = (i + 1) & mask;
    table[i].first = t;
    ++table[i].second;
  }
  size_t common = 0;
  for (size_t k = 0; k < ny; ++k) {
    uint64_t t = trigram(y, k) + 1;
    size_t i = (t * 0x9E3779B97F4A7C15ULL) >> 40 & mask;
    while (table[i].first != 0 && table[i].first != t) i = (i + 1) & mask;
    if (table[i].first == t && table[i].second > 0) {
      --table[i].second;
      ++common;
    }
  }
  return 2.0 * static_cast<double>(common) / static_cast<double>(nx + ny);
}

namespace {

// Trigram overlap (Dice) at or below which a pair is not examined further
// (lower when max_overlap is lower).
constexpr double kNotCopy = 0.3;

class CopyStage : public Stage {
 public:
  CopyStage(const StageContext& ctx, double max_overlap, double max_shared, int64_t min_words)
      : index_(ctx.index),
        max_overlap_(max_overlap),
        max_shared_(max_shared),
        min_words_(static_cast<size_t>(min_words)),
        gate_(std::min(kNotCopy, max_overlap)) {}
  void map(PairBatch& batch) override {
    for (Pair& p : batch.pairs) {
      if (!p.kept()) continue;
      if (p.text[0] == p.text[1]) {
        batch.drop(p, index_, "copy:identical");
        continue;
      }
      // Counting shared words costs a scan of both sides. A pair whose
      // character trigrams overlap by at most gate_ (the cheap upper bound
      // says so) is no copy by the Dice test, and in practice not by the
      // words test either: a target with most of its words copied shares
      // many more trigrams (of the pairs the stage drops on the quality
      // sets, the lowest bound is 0.32; docs/quality.md).
      if (trigram_overlap_bound(p.text[0], p.text[1], gate_, known_chars(p, 0), known_chars(p, 1)) <= gate_) continue;
      WordShare w = shared_words(p.text[1], p.text[0]);
      // Too few words to tell a copy from a translation that looks alike
      // (names, cognates, a month's abbreviation): not judged.
      if (w.words < min_words_) continue;
      if (max_shared_ < 1.0 && static_cast<double>(w.shared) >= max_shared_ * static_cast<double>(w.words)) {
        batch.drop(p, index_, "copy:words");
      } else if (max_overlap_ < 1.0 && could_overlap(p.text[0], p.text[1]) &&
                 trigram_overlap_bound(p.text[0], p.text[1], max_overlap_, known_chars(p, 0), known_chars(p, 1)) >
                     max_overlap_ &&
                 trigram_overlap(p.text[0], p.text[1]) > max_overlap_) {
        batch.drop(p, index_, "copy:overlap");
      }
    }
  }

 private:
  // Dice is at most 2 min / (min + max) of the trigram counts; with byte
  // lengths as a stand-in (a code point is 1 to 4 bytes) a pair whose lengths
  // differ by more than 4x that bound cannot pass it.
  bool could_overlap(std::string_view a, std::string_view b) const {
    double lo = static_cast<double>(std::min(a.size(), b.size())),
           hi = static_cast<double>(std::max(a.size(), b.size()));
    return 2.0 * 4.0 * lo / (4.0 * lo + hi) > max_overlap_;
  }
  // A side's code points if an earlier stage counted them.
  static size_t known_chars(const Pair& p, int side) {
    uint32_t c = p.chars[static_cast<size_t>(side)];
    return c == kUnmeasured ? SIZE_MAX : c;
  }
  int index_;
  double max_overlap_, max_shared_;
  size_t min_words_;
  double gate_;  // pairs whose trigram bound is at most this are not examined
};

}  // namespace

const StageKind& copy_kind() {
  static const StageKind k{
      "copy",
      "drops untranslated pairs (target copied from source)",
      StageRole::kFilter,
      {
          {"max_overlap", FieldType::kNumber, 0.8,
           "drop when the sides' character-trigram overlap (Dice) is above this; 1 = off", 0, 1},
          {"max_shared_words", FieldType::kNumber, 0.75,
           "drop when at least this share of the target's words occur in the source; 1 = off", 0, 1},
          {"min_words", FieldType::kInt, int64_t{3},
           "targets with fewer words are judged only for being identical to the source", 0, 1e9},
      }};
  return k;
}

Result<std::unique_ptr<Stage>> make_copy(const StageContext& ctx) {
  const Params& p = ctx.spec->params;
  return std::unique_ptr<Stage>(std::make_unique<CopyStage>(ctx, p.number("max_overlap"), p.number("max_shared_words"),
                                                            p.integer("min_words")));
}

}  // namespace sheaf
