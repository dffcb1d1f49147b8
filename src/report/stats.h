// Small statistics used by the summary and the size sweep.
//
// Percentiles use the nearest-rank definition: the p-th percentile of N
// sorted values is the value at 1-based rank ceil(p / 100 * N) (rank 1 for
// p = 0). Means are exact ratios of integer sums, so they do not depend on
// the order values were added in.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

namespace sheaf {

uint64_t nearest_rank(const std::vector<uint64_t>& sorted, double p);

struct Distribution {
  uint64_t count = 0, sum = 0, min = 0, max = 0;
  uint64_t p50 = 0, p90 = 0, p95 = 0, p99 = 0;
  double mean = 0;
};
// Sorts `values` in place.
Distribution distribution_of(std::vector<uint64_t>& values);

// JSON object text of a distribution.
std::string distribution_json(const Distribution& d);

}  // namespace sheaf
