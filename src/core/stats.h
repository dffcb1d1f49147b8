// Small statistics used by the summary and the size sweep.
//
// Percentiles use the nearest-rank definition: the p-th percentile of N
// sorted values is the value at 1-based rank ceil(p / 100 * N) (rank 1 for
// p = 0). Means are exact ratios of integer sums, so they do not depend on
// the order values were added in.
#pragma once

#include <cstdint>
#include <map>
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

}  // namespace sheaf

namespace sheaf {

// Exact counts of non-negative integers (lengths, ratios): percentiles by
// nearest rank without keeping the values. Values below kDense are counted in
// an array; larger ones, rare in real text but possible on hostile input (one
// 1 MiB line gives a length ratio in the millions), in an ordered map, so
// memory grows with the number of distinct large values, never with their
// size. Merging is a sum, so the result does not depend on the order or the
// thread that added a value.
class Histogram {
 public:
  static constexpr uint64_t kDense = 1 << 16;

  void add(uint64_t v, uint64_t times = 1);
  void merge(const Histogram& o);
  uint64_t count() const { return count_; }
  uint64_t sum() const { return sum_; }
  Distribution summary() const;
  // Counts in bins of `width` from 0: bin k holds values in [k*width, (k+1)*width).
  std::vector<uint64_t> bins(uint64_t width, size_t most) const;
  // Count of every value from 0 to the largest one added (empty if none).
  std::vector<uint64_t> counts() const;
  // Calls f(value, count) for every value with a nonzero count, in increasing order.
  template <typename F>
  void for_each(F&& f) const {
    for (size_t v = 0; v < dense_.size(); ++v)
      if (dense_[v]) f(static_cast<uint64_t>(v), dense_[v]);
    for (const auto& [v, c] : sparse_) f(v, c);
  }

 private:
  uint64_t value_at_rank(uint64_t rank) const;
  std::vector<uint64_t> dense_;
  std::map<uint64_t, uint64_t> sparse_;
  uint64_t count_ = 0, sum_ = 0;
};

}  // namespace sheaf
