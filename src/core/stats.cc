#include "core/stats.h"

#include <algorithm>
#include <cmath>

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

}  // namespace sheaf

namespace sheaf {

void Histogram::add(uint64_t v, uint64_t times) {
  if (v < kDense) {
    if (v >= dense_.size()) dense_.resize(v + 1, 0);
    dense_[v] += times;
  } else {
    sparse_[v] += times;
  }
  count_ += times;
  sum_ += v * times;
}

void Histogram::merge(const Histogram& o) {
  if (o.dense_.size() > dense_.size()) dense_.resize(o.dense_.size(), 0);
  for (size_t i = 0; i < o.dense_.size(); ++i) dense_[i] += o.dense_[i];
  for (const auto& [v, c] : o.sparse_) sparse_[v] += c;
  count_ += o.count_;
  sum_ += o.sum_;
}

uint64_t Histogram::value_at_rank(uint64_t rank) const {
  uint64_t seen = 0, last = 0;
  bool found = false;
  for_each([&](uint64_t v, uint64_t c) {
    if (found) return;
    seen += c;
    last = v;
    found = seen >= rank;
  });
  return last;
}

std::vector<uint64_t> Histogram::counts() const {
  std::vector<uint64_t> out;
  for_each([&](uint64_t v, uint64_t c) {
    if (v >= out.size()) out.resize(v + 1, 0);
    out[v] = c;
  });
  return out;
}

Distribution Histogram::summary() const {
  Distribution d;
  d.count = count_;
  d.sum = sum_;
  if (count_ == 0) return d;
  auto rank = [&](double p) {
    double r = std::ceil(p / 100.0 * static_cast<double>(count_));
    return r < 1 ? uint64_t{1} : static_cast<uint64_t>(r);
  };
  d.min = value_at_rank(1);
  d.max = value_at_rank(count_);
  d.p50 = value_at_rank(rank(50));
  d.p90 = value_at_rank(rank(90));
  d.p95 = value_at_rank(rank(95));
  d.p99 = value_at_rank(rank(99));
  d.mean = static_cast<double>(sum_) / static_cast<double>(count_);
  return d;
}

std::vector<uint64_t> Histogram::bins(uint64_t width, size_t most) const {
  std::vector<uint64_t> out;
  for_each([&](uint64_t v, uint64_t c) {
    size_t b = static_cast<size_t>(std::min<uint64_t>(v / width, most - 1));
    if (b >= out.size()) out.resize(b + 1, 0);
    out[b] += c;
  });
  return out;
}

}  // namespace sheaf
