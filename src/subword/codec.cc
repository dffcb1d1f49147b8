#include "subword/codec.h"

#include <xxhash.h>

#include <algorithm>
#include <cmath>
#include <cstring>
#include <random>

#include "subword/units.h"

namespace sheaf {

namespace {
// At most 2^22 slots of 32 bytes (128 MiB), filled to 3/4 at most; fewer
// for less text (a text of b bytes has fewer than b/4 distinct units in
// practice), at least 2^12.
size_t cache_slots(uint64_t text_bytes) {
  constexpr size_t kMin = size_t{1} << 12, kMax = size_t{1} << 22;
  if (text_bytes == 0) return kMax;
  size_t n = kMin;
  while (n < kMax && n < text_bytes / 4) n <<= 1;
  return n;
}
}  // namespace

void Encoder::UnitCache::prefetch(uint64_t hash) const {
  if (const Slot* t = table_.load(std::memory_order_acquire)) __builtin_prefetch(&t[hash & (slots_ - 1)]);
}

bool Encoder::UnitCache::find(std::string_view unit, uint64_t hash, std::vector<uint32_t>& out) const {
  const Slot* t = table_.load(std::memory_order_acquire);
  if (t == nullptr || hash <= kWriting) return false;
  for (size_t i = hash & (slots_ - 1), probes = 0; probes < kProbes; i = (i + 1) & (slots_ - 1), ++probes) {
    const Slot& s = t[i];
    uint64_t h = s.hash.load(std::memory_order_acquire);
    if (h == kEmpty) return false;
    if (h == hash && holds(s, unit)) {
      const char* p = s.data + s.bytes_len;
      for (uint32_t k = 0; k < s.ids_len; ++k, p += id_bytes_) {
        if (id_bytes_ == 2) {
          uint16_t id;
          std::memcpy(&id, p, 2);
          out.push_back(id);
        } else {
          uint32_t id;
          std::memcpy(&id, p, 4);
          out.push_back(id);
        }
      }
      return true;
    }
  }
  return false;
}

void Encoder::UnitCache::add(std::string_view unit, uint64_t hash, const uint32_t* ids, uint32_t n,
                             uint32_t& unflushed) {
  // Once full, the cache keeps what it has: in text whose words follow
  // Zipf's law the units seen first are mostly the frequent ones. Each
  // thread adds its count to the shared one in steps of kFlush, so that the
  // threads do not write one cache line for every unit.
  if (hash <= kWriting || unit.size() + n * id_bytes_ > kData ||
      size_.load(std::memory_order_relaxed) + unflushed >= slots_ / 4 * 3)
    return;
  std::call_once(allocated_, [&] {
    store_ = HugeVector<Slot>(slots_);
    table_.store(store_.data(), std::memory_order_release);
  });
  Slot* t = store_.data();
  for (size_t i = hash & (slots_ - 1), probes = 0; probes < kProbes; i = (i + 1) & (slots_ - 1), ++probes) {
    Slot& s = t[i];
    uint64_t h = s.hash.load(std::memory_order_acquire);
    if (h == hash && holds(s, unit)) return;
    if (h != kEmpty || !s.hash.compare_exchange_strong(h, kWriting, std::memory_order_acquire)) continue;
    s.bytes_len = static_cast<uint8_t>(unit.size());
    s.ids_len = static_cast<uint8_t>(n);
    std::memcpy(s.data, unit.data(), unit.size());
    char* p = s.data + unit.size();
    for (uint32_t k = 0; k < n; ++k, p += id_bytes_) {
      if (id_bytes_ == 2) {
        uint16_t id = static_cast<uint16_t>(ids[k]);
        std::memcpy(p, &id, 2);
      } else {
        std::memcpy(p, &ids[k], 4);
      }
    }
    s.hash.store(hash, std::memory_order_release);
    if (++unflushed == kFlush) {
      size_.fetch_add(kFlush, std::memory_order_relaxed);
      unflushed = 0;
    }
    return;
  }
}

Encoder::Encoder(const Vocabulary& v, size_t max_merges, uint64_t text_bytes)
    : v_(v),
      merges_(std::min(max_merges, v.merges())),
      rank_(v, merges_),
      cache_(cache_slots(text_bytes), v.size() <= 65536) {}

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
  // The lowest rank is found while the ranks are (re)computed.
  uint32_t best = UINT32_MAX;
  for (size_t k = 0; k + 1 < n; ++k) best = std::min(best, rank[k] = rank_of(s[k], s[k + 1]));
  rank[n - 1] = UINT32_MAX;
  while (best != UINT32_MAX) {
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
    best = UINT32_MAX;
    for (size_t k = 0; k + 1 < n; ++k) {
      if (merged[k] | merged[k + 1]) rank[k] = rank_of(s[k], s[k + 1]);
      best = std::min(best, rank[k]);
    }
    rank[n - 1] = UINT32_MAX;
  }
  s.resize(n);
}

// Cuts `text` at the user-defined tokens: `plain(segment)` for the text
// between them, `user(id)` for each. At a position the longest token that
// starts there wins; the earliest position first.
template <typename Plain, typename User>
void split_user_tokens(const Vocabulary& v, std::string_view text, Plain plain, User user) {
  const auto& users = v.user_tokens();
  while (!text.empty()) {
    size_t best = std::string_view::npos, len = 0;
    uint32_t id = 0;
    for (const auto& [t, tid] : users) {
      size_t at = text.find(t);
      if (at == std::string_view::npos) continue;
      if (at < best || (at == best && t.size() > len)) {
        best = at;
        len = t.size();
        id = tid;
      }
    }
    if (best == std::string_view::npos) break;
    if (best > 0) plain(text.substr(0, best));
    user(id);
    text.remove_prefix(best + len);
  }
  if (!text.empty()) plain(text);
}

void Encoder::encode_dropout(std::string_view text, double p, uint64_t seed, std::vector<uint32_t>& out) const {
  std::mt19937_64 rng(seed);
  if (!v_.user_tokens().empty()) {
    // One generator for the whole text: each segment draws from it in turn.
    uint64_t next = rng();
    split_user_tokens(
        v_, text, [&](std::string_view seg) { encode_dropout_plain(seg, p, next++, out); },
        [&](uint32_t id) { out.push_back(id); });
    return;
  }
  encode_dropout_plain(text, p, seed, out);
}

void Encoder::encode_dropout_plain(std::string_view text, double p, uint64_t seed, std::vector<uint32_t>& out) const {
  std::mt19937_64 rng(seed);
  // A draw below `cut` (p of the 2^64 values; p = 1 drops every one) drops.
  uint64_t cut = p >= 1 ? UINT64_MAX : static_cast<uint64_t>(std::ldexp(p, 64));
  auto dropped = [&] { return p > 0 && (p >= 1 || rng() < cut); };
  Scratch& sc = scratch_.local();
  sc.ends.clear();
  unit_ends(text, v_.info().single_digits, sc.ends);
  std::vector<uint32_t>& s = sc.symbols;
  std::vector<uint32_t>& rank = sc.ranks;
  uint32_t from = 0;
  for (uint32_t end : sc.ends) {
    std::string_view unit = text.substr(from, end - from);
    from = end;
    s.clear();
    v_.initial_symbols(unit, s);
    // Each step: every position holding a mergeable pair survives with
    // probability 1 - p; the lowest rank among survivors is merged at each
    // surviving position, left to right, as encode() does.
    for (;;) {
      size_t n = s.size();
      rank.assign(n, UINT32_MAX);
      uint32_t best = UINT32_MAX;
      for (size_t k = 0; k + 1 < n; ++k) {
        uint32_t r = rank_.find(s[k], s[k + 1]);
        if (r == UINT32_MAX || dropped()) continue;
        rank[k] = r;
        best = std::min(best, r);
      }
      if (best == UINT32_MAX) break;
      size_t w = 0;
      for (size_t k = 0; k < n; ++w) {
        if (rank[k] == best && k + 1 < n) {
          s[w] = v_.first_merge() + best;
          k += 2;
        } else {
          s[w] = s[k];
          ++k;
        }
      }
      s.resize(w);
    }
    out.insert(out.end(), s.begin(), s.end());
  }
}

void Encoder::remember(std::string_view unit, std::span<const uint32_t> ids) const {
  cache_.add(unit, XXH3_64bits(unit.data(), unit.size()), ids.data(), static_cast<uint32_t>(ids.size()),
             scratch_.local().unflushed);
}

void Encoder::encode(std::string_view text, std::vector<uint32_t>& out, EncodeStats* stats) const {
  if (!v_.user_tokens().empty()) {
    split_user_tokens(
        v_, text, [&](std::string_view seg) { encode_plain(seg, out, stats); },
        [&](uint32_t id) {
          out.push_back(id);
          if (stats) ++stats->tokens;
        });
    return;
  }
  encode_plain(text, out, stats);
}

void Encoder::encode_plain(std::string_view text, std::vector<uint32_t>& out, EncodeStats* stats) const {
  size_t start = out.size();
  Scratch& sc = scratch_.local();
  sc.ends.clear();
  unit_ends(text, v_.info().single_digits, sc.ends);
  // Hash every unit and prefetch its cache slot first, so that the lookups
  // below find their lines on the way.
  sc.hashes.resize(sc.ends.size());
  uint32_t from = 0;
  for (size_t k = 0; k < sc.ends.size(); ++k) {
    sc.hashes[k] = XXH3_64bits(text.data() + from, sc.ends[k] - from);
    cache_.prefetch(sc.hashes[k]);
    from = sc.ends[k];
  }
  from = 0;
  for (size_t k = 0; k < sc.ends.size(); ++k) {
    std::string_view unit = text.substr(from, sc.ends[k] - from);
    from = sc.ends[k];
    if (cache_.find(unit, sc.hashes[k], out)) continue;
    encode_unit(unit, sc);
    out.insert(out.end(), sc.symbols.begin(), sc.symbols.end());
    cache_.add(unit, sc.hashes[k], sc.symbols.data(), static_cast<uint32_t>(sc.symbols.size()), sc.unflushed);
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
    if (id == v.special(kUnk)) {
      out += kUnknownText;
      continue;
    }
    const Token& t = v.token(id);
    if (t.kind != TokenKind::kSpecial) out += t.bytes;
  }
  return out;
}

}  // namespace sheaf
