#include "subword/codec.h"

#include <unicode/utf8.h>

#include "subword/units.h"

namespace sheaf {

namespace {
constexpr size_t kCacheLimit = 1 << 18;  // units per thread
inline uint64_t key(uint32_t a, uint32_t b) { return (static_cast<uint64_t>(a) << 32) | b; }
}  // namespace

Encoder::Encoder(const Vocabulary& v, size_t max_merges) : v_(v), merges_(std::min(max_merges, v.merges())) {
  rank_.reserve(merges_ * 2);
  for (size_t r = 0; r < merges_; ++r) {
    uint32_t id = v.first_merge() + static_cast<uint32_t>(r);
    const Token& t = v.token(id);
    rank_.emplace(key(t.left, t.right), std::pair<uint32_t, uint32_t>{static_cast<uint32_t>(r), id});
  }
}

void Encoder::encode_unit(std::string_view unit, std::vector<uint32_t>& out) const {
  auto& cache = cache_.local();
  auto hit = cache.find(unit);
  if (hit != cache.end()) {
    out.insert(out.end(), hit->second.begin(), hit->second.end());
    return;
  }
  std::vector<uint32_t> s;
  v_.initial_symbols(unit, s);
  // Apply merges lowest rank first; each pass merges every occurrence of the
  // best pair, left to right, as learning did.
  std::vector<uint32_t> next;
  while (s.size() > 1) {
    uint32_t best = UINT32_MAX, result = 0;
    for (size_t k = 0; k + 1 < s.size(); ++k) {
      auto it = rank_.find(key(s[k], s[k + 1]));
      if (it != rank_.end() && it->second.first < best) {
        best = it->second.first;
        result = it->second.second;
      }
    }
    if (best == UINT32_MAX) break;
    const Token& t = v_.token(result);
    next.clear();
    for (size_t k = 0; k < s.size();) {
      if (k + 1 < s.size() && s[k] == t.left && s[k + 1] == t.right) {
        next.push_back(result);
        k += 2;
      } else {
        next.push_back(s[k++]);
      }
    }
    s.swap(next);
  }
  out.insert(out.end(), s.begin(), s.end());
  if (cache.size() > kCacheLimit) cache.clear();
  cache.emplace(std::string(unit), std::move(s));
}

void Encoder::encode(std::string_view text, std::vector<uint32_t>& out, EncodeStats* stats) const {
  size_t start = out.size();
  cut_units(text, v_.info().split_digits, [&](std::string_view u) { encode_unit(u, out); });
  if (stats) {
    stats->tokens += out.size() - start;
    for (size_t k = start; k < out.size(); ++k) {
      stats->byte_tokens += v_.is_byte(out[k]);
      stats->unknown += out[k] == v_.special(kUnk);
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
