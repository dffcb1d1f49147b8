#include "subword/codec.h"

#include <xxhash.h>

#include <algorithm>
#include <cstring>

#include "subword/units.h"

namespace sheaf {

namespace {
// Per thread: 2^20 slots of 64 bytes (64 MiB), filled to 3/4 at most.
constexpr size_t kCacheSlots = 1 << 20;
constexpr size_t kCacheUnits = kCacheSlots / 4 * 3;
}  // namespace

void Encoder::UnitCache::prefetch(uint64_t hash) const {
  if (!slots_.empty()) __builtin_prefetch(&slots_[hash & (kCacheSlots - 1)]);
}

const uint32_t* Encoder::UnitCache::find(std::string_view unit, uint64_t hash, uint32_t& n) const {
  if (slots_.empty() || hash == 0) return nullptr;
  for (size_t i = hash & (kCacheSlots - 1);; i = (i + 1) & (kCacheSlots - 1)) {
    const Slot& s = slots_[i];
    if (s.hash == 0) return nullptr;
    if (s.hash == hash && s.bytes_len == unit.size() && std::memcmp(s.bytes, unit.data(), unit.size()) == 0) {
      n = s.ids_len;
      return s.ids;
    }
  }
}

void Encoder::UnitCache::add(std::string_view unit, uint64_t hash, const uint32_t* ids, uint32_t n) {
  // Once full, the cache keeps what it has: in text whose words follow
  // Zipf's law the units seen first are mostly the frequent ones.
  if (hash == 0 || unit.size() > sizeof(Slot::bytes) || n > std::size(Slot{}.ids) || size_ >= kCacheUnits) return;
  if (slots_.empty()) slots_.assign(kCacheSlots, Slot{});
  size_t i = hash & (kCacheSlots - 1);
  while (slots_[i].hash != 0) i = (i + 1) & (kCacheSlots - 1);
  Slot& s = slots_[i];
  s.hash = hash;
  s.bytes_len = static_cast<uint8_t>(unit.size());
  s.ids_len = static_cast<uint8_t>(n);
  std::memcpy(s.bytes, unit.data(), unit.size());
  std::copy(ids, ids + n, s.ids);
  ++size_;
}

Encoder::Encoder(const Vocabulary& v, size_t max_merges)
    : v_(v), merges_(std::min(max_merges, v.merges())), rank_(v, merges_) {}

// Leaves the unit's ids in sc.symbols. Applies merges lowest rank first;
// each step merges every occurrence of the best pair, left to right, as
// learning did. The rank of each adjacent pair is kept beside the symbols
// and looked up again only next to a merged occurrence.
void Encoder::encode_unit(std::string_view unit, Scratch& sc) const {
  std::vector<uint32_t>& s = sc.symbols;
  std::vector<uint32_t>& rank = sc.ranks;  // rank[k]: of the pair (s[k], s[k + 1])
  std::vector<uint8_t>& merged = sc.merged;
  s.clear();
  v_.initial_symbols(unit, s);
  auto rank_of = [&](uint32_t a, uint32_t b) { return rank_.find(a, b); };
  size_t n = s.size();
  if (n < 2) return;
  rank.resize(n);
  merged.resize(n);
  for (size_t k = 0; k + 1 < n; ++k) rank[k] = rank_of(s[k], s[k + 1]);
  rank[n - 1] = UINT32_MAX;
  for (;;) {
    uint32_t best = *std::min_element(rank.begin(), rank.begin() + static_cast<ptrdiff_t>(n));
    if (best == UINT32_MAX) break;
    uint32_t result = v_.first_merge() + best;
    size_t w = 0;  // in place: w <= k throughout
    for (size_t k = 0; k < n; ++w) {
      if (rank[k] == best) {  // a rank names one pair: this is an occurrence
        s[w] = result;
        merged[w] = 1;
        k += 2;
      } else {
        s[w] = s[k];
        rank[w] = rank[k];  // still right unless a neighbour was merged
        merged[w] = 0;
        ++k;
      }
    }
    n = w;
    for (size_t k = 0; k + 1 < n; ++k)
      if (merged[k] | merged[k + 1]) rank[k] = rank_of(s[k], s[k + 1]);
    rank[n - 1] = UINT32_MAX;
  }
  s.resize(n);
}

void Encoder::encode(std::string_view text, std::vector<uint32_t>& out, EncodeStats* stats) const {
  size_t start = out.size();
  Scratch& sc = scratch_.local();
  sc.ends.clear();
  unit_ends(text, v_.info().split_digits, sc.ends);
  // Hash every unit and prefetch its cache slot first, so that the lookups
  // below find their lines on the way.
  sc.hashes.resize(sc.ends.size());
  uint32_t from = 0;
  for (size_t k = 0; k < sc.ends.size(); ++k) {
    sc.hashes[k] = XXH3_64bits(text.data() + from, sc.ends[k] - from);
    sc.cache.prefetch(sc.hashes[k]);
    from = sc.ends[k];
  }
  from = 0;
  for (size_t k = 0; k < sc.ends.size(); ++k) {
    std::string_view unit = text.substr(from, sc.ends[k] - from);
    from = sc.ends[k];
    uint32_t n = 0;
    if (const uint32_t* ids = sc.cache.find(unit, sc.hashes[k], n)) {
      out.insert(out.end(), ids, ids + n);
      continue;
    }
    encode_unit(unit, sc);
    out.insert(out.end(), sc.symbols.begin(), sc.symbols.end());
    sc.cache.add(unit, sc.hashes[k], sc.symbols.data(), static_cast<uint32_t>(sc.symbols.size()));
  }
  if (stats) {
    stats->tokens += out.size() - start;
    uint32_t unk = v_.special(kUnk);
    for (size_t k = start; k < out.size(); ++k) {
      stats->byte_tokens += v_.is_byte(out[k]);
      stats->unknown += out[k] == unk;
    }
  }
}

std::string decode(const Vocabulary& v, const std::vector<uint32_t>& ids) {
  std::string out;
  for (uint32_t id : ids) {
    if (id >= v.size()) continue;
    const Token& t = v.token(id);
    if (t.kind != TokenKind::kSpecial) out += t.bytes;
  }
  return out;
}

}  // namespace sheaf
