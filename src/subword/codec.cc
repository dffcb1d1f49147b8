#include "subword/codec.h"

#include <xxhash.h>

#include <cstring>

#include "subword/units.h"

namespace sheaf {

namespace {
// Per thread: at most this many units, and this many bytes and ids kept.
constexpr size_t kCacheSlots = 1 << 19;
constexpr size_t kCacheUnits = kCacheSlots / 2;
constexpr size_t kCacheArena = 16 << 20;
}  // namespace

const uint32_t* Encoder::UnitCache::find(std::string_view unit, uint64_t hash, uint32_t& n) const {
  if (slots_.empty()) return nullptr;
  for (size_t i = hash & (kCacheSlots - 1);; i = (i + 1) & (kCacheSlots - 1)) {
    const Slot& s = slots_[i];
    if (s.bytes_len == 0) return nullptr;
    if (s.hash == hash && s.bytes_len == unit.size() && std::memcmp(bytes_.data() + s.bytes_at, unit.data(), unit.size()) == 0) {
      n = s.ids_len;
      return ids_.data() + s.ids_at;
    }
  }
}

void Encoder::UnitCache::add(std::string_view unit, uint64_t hash, const uint32_t* ids, uint32_t n) {
  if (unit.empty() || unit.size() > kCacheArena / 64) return;
  if (slots_.empty() || size_ >= kCacheUnits || bytes_.size() + unit.size() > kCacheArena ||
      ids_.size() + n > kCacheArena / sizeof(uint32_t)) {
    slots_.assign(kCacheSlots, Slot{0, 0, 0, 0, 0});
    bytes_.clear();
    ids_.clear();
    size_ = 0;
  }
  size_t i = hash & (kCacheSlots - 1);
  while (slots_[i].bytes_len != 0) i = (i + 1) & (kCacheSlots - 1);
  slots_[i] = Slot{hash, static_cast<uint32_t>(bytes_.size()), static_cast<uint32_t>(unit.size()),
                   static_cast<uint32_t>(ids_.size()), n};
  bytes_.append(unit);
  ids_.insert(ids_.end(), ids, ids + n);
  ++size_;
}

Encoder::Encoder(const Vocabulary& v, size_t max_merges)
    : v_(v), merges_(std::min(max_merges, v.merges())), rank_(merges_) {
  for (size_t r = 0; r < merges_; ++r) {
    uint32_t id = v.first_merge() + static_cast<uint32_t>(r);
    const Token& t = v.token(id);
    bool created;
    auto* slot = rank_.insert(pair_key(t.left, t.right), created);
    if (created) slot->value = Rank{static_cast<uint32_t>(r), id};
  }
}

// Leaves the unit's ids in s.symbols.
void Encoder::encode_unit(std::string_view unit, Scratch& sc) const {
  std::vector<uint32_t>& s = sc.symbols;
  s.clear();
  v_.initial_symbols(unit, s);
  // Apply merges lowest rank first; each pass merges every occurrence of the
  // best pair, left to right, as learning did.
  while (s.size() > 1) {
    uint32_t best = UINT32_MAX, result = 0;
    for (size_t k = 0; k + 1 < s.size(); ++k) {
      const auto* slot = rank_.find(pair_key(s[k], s[k + 1]));
      if (slot != nullptr && slot->value.rank < best) {
        best = slot->value.rank;
        result = slot->value.result;
      }
    }
    if (best == UINT32_MAX) break;
    const Token& t = v_.token(result);
    size_t w = 0;
    for (size_t k = 0; k < s.size();) {
      if (k + 1 < s.size() && s[k] == t.left && s[k + 1] == t.right) {
        s[w++] = result;
        k += 2;
      } else {
        s[w++] = s[k++];
      }
    }
    s.resize(w);
  }
}

void Encoder::encode(std::string_view text, std::vector<uint32_t>& out, EncodeStats* stats) const {
  size_t start = out.size();
  Scratch& sc = scratch_.local();
  sc.ends.clear();
  unit_ends(text, v_.info().split_digits, sc.ends);
  uint32_t from = 0;
  for (uint32_t e : sc.ends) {
    std::string_view unit = text.substr(from, e - from);
    from = e;
    uint64_t h = XXH3_64bits(unit.data(), unit.size());
    uint32_t n = 0;
    if (const uint32_t* ids = sc.cache.find(unit, h, n)) {
      out.insert(out.end(), ids, ids + n);
      continue;
    }
    encode_unit(unit, sc);
    out.insert(out.end(), sc.symbols.begin(), sc.symbols.end());
    sc.cache.add(unit, h, sc.symbols.data(), static_cast<uint32_t>(sc.symbols.size()));
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
