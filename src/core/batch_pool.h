// BatchPool: a fixed set of reusable objects handed between the filters of a
// oneTBB pipeline. The pool owns them, so nothing leaks when a pipeline is
// cancelled by an error or an interrupt; its size is the pipeline's bound on
// objects in flight.
#pragma once

#include <oneapi/tbb/concurrent_queue.h>

#include <memory>
#include <vector>

namespace sheaf {

template <typename T>
class BatchPool {
 public:
  explicit BatchPool(size_t n) {
    for (size_t i = 0; i < n; ++i) {
      owned_.push_back(std::make_unique<T>());
      free_.push(owned_.back().get());
    }
  }
  size_t size() const { return owned_.size(); }
  T* acquire() {
    T* t = nullptr;
    free_.pop(t);
    return t;
  }
  void release(T* t) { free_.push(t); }

 private:
  std::vector<std::unique_ptr<T>> owned_;
  tbb::concurrent_bounded_queue<T*> free_;
};

}  // namespace sheaf
