#include "stages/near_dup.h"

#include <unicode/uchar.h>
#include <unicode/utf8.h>
// XXH3 inlined here (the library's header-only mode, same hashes): a pair's
// shingles are a few bytes each, hashed a few dozen times per pair, and the
// call into the shared library cost more than the hashing.
#define XXH_INLINE_ALL
#include <xxhash.h>

#include <algorithm>
#include <cstring>
#include <deque>

#include "core/huge_pages.h"
#include "core/tsan.h"
#include "core/utf8.h"
#include "stages/near_dup_table.h"

namespace sheaf {

namespace {

// Sixteen 32-bit lanes: GCC's vector extension, so the signature loop is
// one instruction per lane group with AVX-512, two with AVX2 and four with
// plain SSE2 (target_clones below picks at load time). Sixteen, not eight:
// with AVX-512 the loop then does half the instructions (measured: the
// signature loop's share of a profiled run fell from 11% to 7.5%).
typedef uint32_t Lanes __attribute__((vector_size(64)));
constexpr size_t kLanes = 16;

uint64_t splitmix64(uint64_t& state) {
  uint64_t z = (state += 0x9E3779B97F4A7C15ULL);
  z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
  z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
  return z ^ (z >> 31);
}

size_t padded(size_t k) { return (k + kLanes - 1) / kLanes * kLanes; }

// The hot loop: for every shingle hash, every signature value takes the
// least image of the hash's low half under its permutation
// x -> (x ^ add) * mul (odd mul: a bijection of 32-bit words), XORed with
// the hash's high half, then mixed once more (xorshift, multiply). With one
// multiplication only, the measured share found fell 2-3 standard
// deviations below the banding curve at s = 0.55 and 0.7 (consistently
// low): the values of a signature were not independent enough. The
// measured curve (docs/near-duplicates.md) is the check. Under
// ThreadSanitizer GCC instruments the load-time resolver of target_clones,
// which then runs before the TSan runtime is set up (the binary crashed in the
// dynamic loader), so a TSan build has the default clone only.
#ifdef SHEAF_UNDER_TSAN
#define SHEAF_MIN_IMAGES_CLONES
#else
#define SHEAF_MIN_IMAGES_CLONES __attribute__((target_clones("avx512f", "avx2", "default")))
#endif
SHEAF_MIN_IMAGES_CLONES void min_images(const uint64_t* hashes, size_t n, const uint32_t* mul, const uint32_t* add,
                                        uint32_t* sig, size_t k) {
  for (size_t g = 0; g < k; g += kLanes) {
    Lanes m, a, s;
    std::memcpy(&m, mul + g, sizeof m);
    std::memcpy(&a, add + g, sizeof a);
    std::memcpy(&s, sig + g, sizeof s);
    for (size_t j = 0; j < n; ++j) {
      uint32_t lo = static_cast<uint32_t>(hashes[j]), hi = static_cast<uint32_t>(hashes[j] >> 32);
      Lanes v = ((lo ^ a) * m) ^ hi;
      v ^= v >> 15;
      v *= 0x2C1B3C6Du;
      s = v < s ? v : s;
    }
    std::memcpy(sig + g, &s, sizeof s);
  }
}

// Word bounds of a canonical text (words are separated by one space):
// bounds[2k] and bounds[2k + 1] are where word k starts and ends.
void word_bounds(std::string_view c, std::vector<uint32_t>& bounds) {
  bounds.clear();
  size_t i = 0;
  while (i < c.size()) {
    size_t sp = c.find(' ', i);
    if (sp == std::string_view::npos) sp = c.size();
    bounds.push_back(static_cast<uint32_t>(i));
    bounds.push_back(static_cast<uint32_t>(sp));
    i = sp + 1;
  }
}

}  // namespace

NearDupSketch::NearDupSketch(const NearDupOptions& o) : o_(o) {
  size_t k = padded(static_cast<size_t>(o.bands) * static_cast<size_t>(o.rows));
  uint64_t state = o.seed ^ 0x6E6561722D647570ULL;
  mul_.resize(k);
  add_.resize(k);
  for (size_t i = 0; i < k; ++i) {
    uint64_t r = splitmix64(state);
    mul_[i] = static_cast<uint32_t>(r) | 1u;
    add_[i] = static_cast<uint32_t>(r >> 32);
  }
}

namespace {

// ASCII bytes in the canonical form: the lowercase letter or digit, or 0
// for a separator.
struct AsciiFold {
  char to[128];
  constexpr AsciiFold() : to{} {
    for (int c = 0; c < 128; ++c)
      to[c] = c >= 'a' && c <= 'z' ? static_cast<char>(c)
              : c >= 'A' && c <= 'Z' ? static_cast<char>(c + 32)
              : c >= '0' && c <= '9' ? static_cast<char>(c)
                                     : 0;
  }
};
constexpr AsciiFold kFold;

}  // namespace

namespace {

// The canonical form of `text` into `out`; with kBounds, also its word
// bounds into bounds[] (as word_bounds() gives them; room for
// text.size() + 4 values), returning the number of words. Recording them
// here saves a second pass over the text.
template <bool kBounds>
size_t canonical_form(std::string_view text, std::string& out, uint32_t* bounds) {
  // Written through a pointer into a buffer large enough for the longest
  // result (a lowercase form is at most 3/2 as long in UTF-8, as for
  // U+023A -> U+2C65), then cut to size.
  out.resize(text.size() * 3 / 2 + 4);
  char* w = out.data();
  char* begin = w;
  Utf8Cursor u(text);
  const uint8_t* p = u.data();
  const size_t n = u.end();
  bool gap = false;
  size_t words = 0;  // spaces written so far (kBounds)
  if (kBounds) bounds[0] = 0;
  while (!u.done()) {
    if (u.byte() < 0x80) {
      // A run of ASCII without branches on letter or separator (they
      // alternate every few bytes, so a branch on them is mispredicted
      // often): the space and the letter are always stored and kept or not.
      // One add to w per byte: its chain sets the pace.
      bool started = w != begin;
      size_t i = u.pos();
      do {
        char f = kFold.to[p[i]];
        unsigned letter = f != 0;
        unsigned space = letter & gap & started;
        w[0] = ' ';
        w[space] = f;
        if (kBounds) {  // a space ends word `words` and starts the next
          uint32_t at = static_cast<uint32_t>(w - begin);
          bounds[2 * words + 1] = at;
          bounds[2 * words + 2] = at + 1;
          words += space;
        }
        w += space + letter;
        started |= letter;
        gap = !letter;
      } while (++i < n && p[i] < 0x80);
      u.seek(i);
      continue;
    }
    UChar32 c = u.next();
    if (c < 0 || !(U_GET_GC_MASK(c) & (U_GC_L_MASK | U_GC_M_MASK | U_GC_N_MASK))) {
      gap = true;
      continue;
    }
    if (gap && w != begin) {
      if (kBounds) {
        uint32_t at = static_cast<uint32_t>(w - begin);
        bounds[2 * words + 1] = at;
        bounds[2 * words + 2] = at + 1;
        ++words;
      }
      *w++ = ' ';
    }
    gap = false;
    c = u_tolower(c);
    int32_t len = 0;
    U8_APPEND_UNSAFE(reinterpret_cast<uint8_t*>(w), len, c);
    w += len;
  }
  out.resize(static_cast<size_t>(w - begin));
  if (!kBounds || out.empty()) return 0;
  bounds[2 * words + 1] = static_cast<uint32_t>(out.size());
  return words + 1;
}

}  // namespace

void NearDupSketch::canonical(std::string_view text, std::string& out) { canonical_form<false>(text, out, nullptr); }

std::vector<uint32_t> NearDupSketch::empty() const {
  return std::vector<uint32_t>(padded(static_cast<size_t>(o_.bands) * static_cast<size_t>(o_.rows)), UINT32_MAX);
}

void NearDupSketch::add_hashes(const uint64_t* hashes, size_t n, std::vector<uint32_t>& signature) const {
  min_images(hashes, n, mul_.data(), add_.data(), signature.data(), signature.size());
}

size_t NearDupSketch::add(std::string_view c, uint64_t salt, std::vector<uint32_t>& signature) const {
  if (c.empty()) return 0;
  thread_local std::vector<uint32_t> bounds;
  if (o_.unit == ShingleUnit::kWords) {
    word_bounds(c, bounds);
  } else {
    // Code point boundaries: each code point is a "word" of the span logic.
    bounds.clear();
    for (size_t i = 0; i < c.size();) {
      // By lead byte, not decoded (core/utf8.h's utf8_lead_length): `c` is
      // a canonical form, well-formed, where the two agree; on other input
      // this keeps the units it always cut.
      size_t len = utf8_lead_length(static_cast<uint8_t>(c[i]));
      bounds.push_back(static_cast<uint32_t>(i));
      i = std::min(c.size(), i + len);
      bounds.push_back(static_cast<uint32_t>(i));
    }
  }
  return add_units(c, bounds.data(), bounds.size() / 2, salt, signature);
}

size_t NearDupSketch::add_text(std::string_view text, uint64_t salt, std::vector<uint32_t>& signature) const {
  thread_local std::string c;
  if (o_.unit != ShingleUnit::kWords) {
    canonical(text, c);
    return add(c, salt, signature);
  }
  thread_local std::vector<uint32_t> bounds;
  bounds.resize(text.size() + 4);
  size_t words = canonical_form<true>(text, c, bounds.data());
  if (words == 0) return 0;
  return add_units(c, bounds.data(), words, salt, signature);
}

size_t NearDupSketch::add_units(std::string_view c, const uint32_t* bounds, size_t units, uint64_t salt,
                                std::vector<uint32_t>& signature) const {
  thread_local std::vector<uint64_t> hashes;
  size_t n = static_cast<size_t>(o_.shingle_size);
  size_t shingles = units >= n ? units - n + 1 : 1;
  hashes.resize(shingles);
  for (size_t k = 0; k < shingles; ++k) {
    size_t last = std::min(units, k + n) - 1;
    hashes[k] = XXH3_64bits_withSeed(c.data() + bounds[2 * k], bounds[2 * last + 1] - bounds[2 * k], salt);
  }
  add_hashes(hashes.data(), hashes.size(), signature);
  return shingles;
}

void NearDupSketch::band_keys(const std::vector<uint32_t>& signature, uint64_t* out) const {
  size_t r = static_cast<size_t>(o_.rows);
  for (size_t b = 0; b < static_cast<size_t>(o_.bands); ++b)
    out[b] = XXH3_64bits_withSeed(signature.data() + b * r, r * sizeof(uint32_t),
                                  o_.seed * 0x9E3779B97F4A7C15ULL + b + 1);
}

namespace {

class NearDupStage : public Stage {
 public:
  NearDupStage(const StageContext& ctx, const NearDupOptions& o, int scope)
      : index_(ctx.index),
        pipeline_(ctx.pipeline),
        sketch_(o),
        scope_(scope),
        tables_(static_cast<size_t>(o.bands)),
        spots_(static_cast<size_t>(o.bands)) {}

  void map(PairBatch& batch) override {
    size_t bands = static_cast<size_t>(sketch_.options().bands);
    batch.scratch.resize(batch.pairs.size() * bands);
    std::vector<uint32_t> sig;
    uint64_t salt = sketch_.options().seed * 0xC2B2AE3D27D4EB4FULL;
    for (size_t i = 0; i < batch.pairs.size(); ++i) {
      Pair& p = batch.pairs[i];
      p.key[0] = 0;
      if (!p.kept()) continue;
      if (sig.empty()) sig = sketch_.empty();
      else std::fill(sig.begin(), sig.end(), UINT32_MAX);
      size_t shingles = 0;
      for (int side = 0; side < 2; ++side) {
        if (scope_ != 2 && scope_ != side) continue;
        shingles += sketch_.add_text(p.text[static_cast<size_t>(side)], salt + static_cast<uint64_t>(side), sig);
      }
      if (shingles == 0) continue;
      p.key[0] = 1;
      sketch_.band_keys(sig, batch.scratch.data() + i * bands);
    }
  }

  bool has_reduce() const override { return true; }
  void reduce(PairBatch& batch) override {
    size_t bands = static_cast<size_t>(sketch_.options().bands);
    constexpr size_t kAhead = 4;
    auto prefetch = [&](size_t i) {
      if (i >= batch.pairs.size() || !batch.pairs[i].kept() || batch.pairs[i].key[0] == 0) return;
      for (size_t b = 0; b < bands; ++b) tables_[b].prefetch(batch.scratch[i * bands + b]);
    };
    for (size_t i = 0; i < kAhead; ++i) prefetch(i);
    for (size_t i = 0; i < batch.pairs.size(); ++i) {
      prefetch(i + kAhead);
      Pair& p = batch.pairs[i];
      if (!p.kept() || p.key[0] == 0) continue;
      const uint64_t* keys = batch.scratch.data() + i * bands;
      // The earliest kept pair sharing any band.
      int64_t match = -1;
      for (size_t b = 0; b < bands; ++b) {
        int64_t k = tables_[b].find(keys[b], spots_[b]);
        if (k >= 0 && (match < 0 || k < match)) match = k;
      }
      if (match >= 0) {
        uint64_t o = kept_[static_cast<size_t>(match)];
        batch.drop(p, index_, "near-duplicate:" + pipeline_->origin(static_cast<uint32_t>(o >> 48), o & kLineMask));
        continue;
      }
      uint64_t id = kept_.size();
      kept_.push_back((uint64_t{p.corpus} << 48) | (p.line & kLineMask));
      // No band was found: the pair's key goes into every band's table.
      for (size_t b = 0; b < bands; ++b) tables_[b].insert(keys[b], id, spots_[b]);
    }
  }

  std::vector<std::pair<std::string, uint64_t>> counters() const override {
    // The deque's blocks hold 64 values each (libstdc++: 512 bytes).
    size_t bytes = (kept_.size() + 63) / 64 * 512;
    for (const NearDupBandTable& t : tables_) bytes += t.memory_bytes();
    return {{"kept_sketches", kept_.size()}, {"table_bytes", bytes}};
  }

 private:
  static constexpr uint64_t kLineMask = (uint64_t{1} << 48) - 1;
  int index_;
  const Pipeline* pipeline_;
  NearDupSketch sketch_;
  int scope_;  // 0 source, 1 target, 2 pair
  std::vector<NearDupBandTable> tables_;  // one per band: a partitioned run can own some bands each
  std::vector<NearDupBandTable::Spot> spots_;  // where each band's lookup of the current pair stopped
  // Per kept pair: corpus << 48 | line. A deque, not a vector: it grows
  // by blocks, with no spare half and no copy at a doubling.
  std::deque<uint64_t> kept_;
};

}  // namespace

const StageKind& near_dup_kind() {
  static const StageKind k{
      "near-dup",
      "drops near-duplicates (MinHash with banding), keeping the first in input order",
      StageRole::kFilter,
      {
          {"scope", FieldType::kChoice, std::string("pair"), "which text is compared: the pair, the source or the target",
           0, 0, {"pair", "source", "target"}},
          {"shingle", FieldType::kChoice, std::string("words"), "shingles are runs of words or of characters", 0, 0,
           {"words", "chars"}},
          {"shingle_size", FieldType::kInt, int64_t{2}, "words (or characters) per shingle", 1, 32},
          {"bands", FieldType::kInt, int64_t{15}, "bands of the signature: more bands find less similar pairs", 1, 64},
          {"rows", FieldType::kInt, int64_t{11}, "signature values per band: more rows demand more similarity", 1, 32},
          {"seed", FieldType::kInt, int64_t{1}, "seed of the permutations and hashes", 0, 9.2e18},
      },
      {},
      {},
      /*varies_per_corpus=*/false,
      /*opt_in=*/true};
  return k;
}

Result<std::unique_ptr<Stage>> make_near_dup(const StageContext& ctx) {
  const Params& p = ctx.spec->params;
  NearDupOptions o;
  o.unit = p.text("shingle") == "chars" ? ShingleUnit::kChars : ShingleUnit::kWords;
  o.shingle_size = static_cast<int>(p.integer("shingle_size"));
  o.bands = static_cast<int>(p.integer("bands"));
  o.rows = static_cast<int>(p.integer("rows"));
  o.seed = static_cast<uint64_t>(p.integer("seed"));
  const std::string& s = p.text("scope");
  int scope = s == "source" ? 0 : s == "target" ? 1 : 2;
  return std::unique_ptr<Stage>(std::make_unique<NearDupStage>(ctx, o, scope));
}

}  // namespace sheaf
