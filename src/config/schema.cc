#include "config/schema.h"

#include <algorithm>
#include <stdexcept>

namespace sheaf {

const Param* Params::find(std::string_view key) const {
  for (const auto& p : items_)
    if (p.key == key) return &p;
  return nullptr;
}

Param& Params::set(std::string key, Value v, Location where) {
  for (auto& p : items_) {
    if (p.key == key) {
      p.value = std::move(v);
      p.where = std::move(where);
      return p;
    }
  }
  items_.push_back(Param{std::move(key), std::move(v), std::move(where)});
  return items_.back();
}

const Value& Params::get(std::string_view key) const {
  const Param* p = find(key);
  if (p == nullptr) throw std::logic_error("sheaf: no such key in params: " + std::string(key));
  return p->value;
}

double Params::number(std::string_view key) const {
  const Value& v = get(key);
  if (const auto* i = std::get_if<int64_t>(&v)) return static_cast<double>(*i);
  return std::get<double>(v);
}

Location Params::where(std::string_view key) const {
  const Param* p = find(key);
  return p ? p->where : Location{};
}

std::string closest_name(std::string_view word, const std::vector<std::string>& candidates) {
  std::string best;
  size_t best_d = std::string::npos;
  for (const auto& c : candidates) {
    std::vector<size_t> prev(c.size() + 1), cur(c.size() + 1);
    for (size_t j = 0; j <= c.size(); ++j) prev[j] = j;
    for (size_t i = 1; i <= word.size(); ++i) {
      cur[0] = i;
      for (size_t j = 1; j <= c.size(); ++j) {
        size_t sub = prev[j - 1] + (word[i - 1] == c[j - 1] ? 0 : 1);
        cur[j] = std::min({prev[j] + 1, cur[j - 1] + 1, sub});
      }
      std::swap(prev, cur);
    }
    if (prev[c.size()] < best_d) {
      best_d = prev[c.size()];
      best = c;
    }
  }
  // Only suggest names that are plausibly a typo.
  if (best_d == std::string::npos || best_d > std::max<size_t>(2, word.size() / 2)) return {};
  return best;
}

}  // namespace sheaf
