// BatchPool: a fixed set of reusable objects handed between the filters of a
// oneTBB pipeline. The pool owns them, so nothing leaks when a pipeline is
// cancelled by an error or an interrupt; its size is the pipeline's bound on
// objects in flight. Taking and returning an object are handed over for
// ThreadSanitizer (core/tsan.h).
#pragma once

#include <oneapi/tbb/concurrent_queue.h>
#include <oneapi/tbb/parallel_pipeline.h>

#include <memory>
#include <vector>

#include "core/tsan.h"

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
    handoff_acquire(t);
    return t;
  }
  void release(T* t) {
    handoff_release(t);
    free_.push(t);
  }
  // tbb::parallel_pipeline(size(), filters) as a TaskRun: the filters are
  // built before it starts, so ThreadSanitizer sees them built before they
  // run.
  void run_pipeline(const tbb::filter<void, void>& filters) const {
    TaskRun run;
    tbb::parallel_pipeline(size(), filters);
  }

 private:
  std::vector<std::unique_ptr<T>> owned_;
  tbb::concurrent_bounded_queue<T*> free_;
};

}  // namespace sheaf
