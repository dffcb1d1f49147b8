// near_dup: drops a pair that is a near-duplicate of an earlier kept pair.
//
// Each pair's text (both sides for scope "pair", else one side) is reduced
// to a canonical form (lowercase; every run of characters that are not
// letters, marks or digits becomes one space) and cut into shingles: runs
// of `shingle_size` words (shingle = "words", the default) or code points
// ("chars"); a side shorter than one shingle is one shingle. The set of
// shingle hashes gets a MinHash signature of bands x rows 32-bit values
// (Broder 1997, "On the resemblance and containment of documents"): value i
// is the least image of the shingle hashes under the i-th of bands x rows
// seeded permutations, so two sets agree on value i with probability equal
// to their Jaccard similarity s. The signature is cut into `bands` bands of
// `rows` values and each band is hashed into a 64-bit band key (the band's
// index is part of the key). Two pairs are near-duplicates when they share a
// band key, which happens with probability 1 - (1 - s^rows)^bands
// (Leskovec, Rajaraman & Ullman, "Mining of Massive Datasets", ch. 3.4);
// the defaults (15 bands of 11 rows) detect 99.6% of pairs at s = 0.9 and
// 0.7% at s = 0.5, and the curve is steepest near s = 0.78.
// Exact duplicates (after canonical form) have equal signatures and are
// always found. A pair with no letter or digit has no shingle and is left
// to the other stages.
//
// The first pair in input order is kept (corpora are read in priority
// order, so a higher-priority corpus wins); a later one is dropped with
// reason near-duplicate:ORIGIN, ORIGIN = the kept pair's input line, or
// CORPUS:LINE with named corpora.
//
// map() computes signatures and band keys (pure, parallel); reduce() looks
// the band keys up in input order, so the result is the same at any thread
// count. Each band has its own table of the kept pairs' keys in that band:
// 8-byte slots holding the kept pair's index and, with the slot's position,
// the key's top 58 bits: bands x 8 / load + 8 bytes per kept pair (naming the
// kept pair), load between 3/8 and 3/4, so 168 to 328 bytes with 15 bands
// (docs/near-duplicates.md has the arithmetic, and why 64 is out of reach
// while the reason names the kept line). The tables double one at a time,
// so a doubling briefly adds 2/15 of the total, not twice it. Keys that
// the slots cannot hold (crafted to share home slots) go to a small
// overflow map, never to a bigger table (stages/near_dup_table.h). One table per
// band is also the split a partitioned run needs: each partition can own
// some bands and resolve their keys there.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "stages/stage.h"

namespace sheaf {

enum class ShingleUnit { kWords, kChars };

struct NearDupOptions {
  ShingleUnit unit = ShingleUnit::kWords;
  int shingle_size = 2;
  int bands = 15;
  int rows = 11;
  uint64_t seed = 1;
};

// The MinHash signature and band keys of one pair, computed the way the
// stage computes them. Exposed for tests and benchmarks.
class NearDupSketch {
 public:
  explicit NearDupSketch(const NearDupOptions& o);

  // Canonical form of one side (lowercase, separators collapsed to one
  // space, trimmed).
  static void canonical(std::string_view text, std::string& out);
  // Adds one side's shingles (from its canonical form) to the signature;
  // `salt` keeps the sides of a pair apart. Returns the number of shingles.
  size_t add(std::string_view canonical_text, uint64_t salt, std::vector<uint32_t>& signature) const;
  // canonical() then add(), in one pass over the text for word shingles.
  size_t add_text(std::string_view text, uint64_t salt, std::vector<uint32_t>& signature) const;
  // An empty signature (every value at its maximum) of bands x rows values.
  std::vector<uint32_t> empty() const;
  // The band keys of a signature, appended to `out`.
  void band_keys(const std::vector<uint32_t>& signature, uint64_t* out) const;
  // The signature of a set of 64-bit shingle hashes (for tests with sets of
  // known Jaccard similarity).
  void add_hashes(const uint64_t* hashes, size_t n, std::vector<uint32_t>& signature) const;

  const NearDupOptions& options() const { return o_; }

 private:
  // Adds the shingles of `units` words (or code points) of canonical text
  // c, word k spanning [bounds[2k], bounds[2k + 1]).
  size_t add_units(std::string_view c, const uint32_t* bounds, size_t units, uint64_t salt,
                   std::vector<uint32_t>& signature) const;

  NearDupOptions o_;
  std::vector<uint32_t> mul_, add_;
};

const StageKind& near_dup_kind();
Result<std::unique_ptr<Stage>> make_near_dup(const StageContext& ctx);

}  // namespace sheaf
