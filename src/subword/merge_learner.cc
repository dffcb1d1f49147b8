#include "subword/merge_learner.h"

#include <algorithm>
#include <queue>
#include <unordered_map>

namespace sheaf {

namespace {

inline uint64_t key(uint32_t a, uint32_t b) { return (static_cast<uint64_t>(a) << 32) | b; }
inline SymbolPair unkey(uint64_t k) { return {static_cast<uint32_t>(k >> 32), static_cast<uint32_t>(k)}; }

}  // namespace

std::vector<Merge> learn_merges(std::vector<WordType>& words, const LearnOptions& o) {
  const uint32_t first_mergeable = o.first_mergeable;
  auto mergeable = [first_mergeable](uint32_t s) { return s >= first_mergeable; };
  auto before = [&](uint64_t a, uint64_t b) {
    if (o.before) return o.before(unkey(a), unkey(b));
    return a < b;
  };

  std::unordered_map<uint64_t, int64_t> count;
  std::unordered_map<uint64_t, std::vector<uint32_t>> where;
  count.reserve(words.size() * 4);
  where.reserve(words.size() * 4);
  for (uint32_t w = 0; w < words.size(); ++w) {
    const auto& s = words[w].symbols;
    for (size_t i = 0; i + 1 < s.size(); ++i) {
      if (!mergeable(s[i]) || !mergeable(s[i + 1])) continue;
      uint64_t k = key(s[i], s[i + 1]);
      count[k] += static_cast<int64_t>(words[w].count);
      auto& v = where[k];
      if (v.empty() || v.back() != w) v.push_back(w);
    }
  }

  struct Entry {
    int64_t count;
    uint64_t pair;
  };
  auto worse = [&](const Entry& a, const Entry& b) {
    if (a.count != b.count) return a.count < b.count;
    return before(b.pair, a.pair);  // the pair that comes first is better
  };
  std::priority_queue<Entry, std::vector<Entry>, decltype(worse)> heap(worse);
  for (const auto& [k, c] : count) heap.push({c, k});

  std::vector<Merge> merges;
  std::vector<uint32_t> fresh;
  std::unordered_map<uint64_t, int64_t> delta;
  uint32_t next_id = o.first_new_id;
  while (merges.size() < o.max_merges && !heap.empty()) {
    Entry top = heap.top();
    heap.pop();
    auto it = count.find(top.pair);
    int64_t current = it == count.end() ? 0 : it->second;
    if (current != top.count) {  // stale: counts only fall, so re-queue
      if (current > 0) heap.push({current, top.pair});
      continue;
    }
    if (current <= 0 || static_cast<uint64_t>(current) < o.min_count) break;
    SymbolPair pr = unkey(top.pair);
    uint32_t z = next_id++;
    merges.push_back({pr.left, pr.right, z, static_cast<uint64_t>(current)});
    if (o.on_merge) o.on_merge(merges.back());

    std::vector<uint32_t> holders = std::move(where[top.pair]);
    where.erase(top.pair);
    delta.clear();
    for (uint32_t w : holders) {
      auto& s = words[w].symbols;
      int64_t c = static_cast<int64_t>(words[w].count);
      bool has = false;
      for (size_t i = 0; i + 1 < s.size(); ++i)
        if (s[i] == pr.left && s[i + 1] == pr.right) {
          has = true;
          break;
        }
      if (!has) continue;  // a stale entry of the index
      for (size_t i = 0; i + 1 < s.size(); ++i)
        if (mergeable(s[i]) && mergeable(s[i + 1])) delta[key(s[i], s[i + 1])] -= c;
      fresh.clear();
      for (size_t i = 0; i < s.size();) {
        if (i + 1 < s.size() && s[i] == pr.left && s[i + 1] == pr.right) {
          fresh.push_back(z);
          i += 2;
        } else {
          fresh.push_back(s[i]);
          ++i;
        }
      }
      s.swap(fresh);
      for (size_t i = 0; i + 1 < s.size(); ++i) {
        if (!mergeable(s[i]) || !mergeable(s[i + 1])) continue;
        uint64_t k = key(s[i], s[i + 1]);
        delta[k] += c;
        if (s[i] == z || s[i + 1] == z) {
          auto& v = where[k];
          if (v.empty() || v.back() != w) v.push_back(w);
        }
      }
    }
    // Apply the changes in a fixed order (the map's order must not matter).
    std::vector<std::pair<uint64_t, int64_t>> changes(delta.begin(), delta.end());
    std::sort(changes.begin(), changes.end());
    for (const auto& [k, d] : changes) {
      if (d == 0) continue;
      int64_t& c = count[k];
      c += d;
      if (d > 0) heap.push({c, k});  // only pairs with the new symbol grow
      if (c <= 0) count.erase(k);
    }
    if (o.progress && merges.size() % 1000 == 0) o.progress(merges.size(), static_cast<uint64_t>(current));
    if (o.stop && merges.size() % 256 == 0 && o.stop()) break;
  }
  return merges;
}

}  // namespace sheaf
