#include "report/stats.h"

#include <algorithm>
#include <cmath>
#include <nlohmann/json.hpp>

namespace sheaf {

uint64_t nearest_rank(const std::vector<uint64_t>& sorted, double p) {
  if (sorted.empty()) return 0;
  double r = std::ceil(p / 100.0 * static_cast<double>(sorted.size()));
  size_t rank = r < 1 ? 1 : static_cast<size_t>(r);
  if (rank > sorted.size()) rank = sorted.size();
  return sorted[rank - 1];
}

Distribution distribution_of(std::vector<uint64_t>& v) {
  Distribution d;
  std::sort(v.begin(), v.end());
  d.count = v.size();
  if (v.empty()) return d;
  for (uint64_t x : v) d.sum += x;
  d.min = v.front();
  d.max = v.back();
  d.p50 = nearest_rank(v, 50);
  d.p90 = nearest_rank(v, 90);
  d.p95 = nearest_rank(v, 95);
  d.p99 = nearest_rank(v, 99);
  d.mean = static_cast<double>(d.sum) / static_cast<double>(d.count);
  return d;
}

std::string distribution_json(const Distribution& d) {
  nlohmann::ordered_json j = {{"count", d.count}, {"sum", d.sum}, {"mean", d.mean}, {"min", d.min}, {"p50", d.p50},
                              {"p90", d.p90},     {"p95", d.p95}, {"p99", d.p99},   {"max", d.max}};
  return j.dump();
}

}  // namespace sheaf
