// HugePageAllocator: a std::allocator for the large hash tables and arrays
// that are read at random (word-unit counts, pair counts, the word store,
// the dedup set). Blocks of 4 MiB and more are aligned to 2 MiB and marked
// with madvise(MADV_HUGEPAGE) before anything touches them, so that on a
// kernel whose transparent huge pages are in "madvise" mode (Debian's
// default) they are backed by 2 MiB pages: a random probe then costs a cache
// miss but rarely a TLB miss too. Elsewhere the advice is a no-op. Smaller
// blocks come from the ordinary allocator.
#pragma once

#include <sys/mman.h>

#include <cstddef>
#include <cstdlib>
#include <memory>
#include <new>
#include <vector>

namespace sheaf {

template <typename T>
struct HugePageAllocator {
  using value_type = T;
  static constexpr size_t kPage = size_t{2} << 20;
  static constexpr size_t kFrom = size_t{4} << 20;

  HugePageAllocator() = default;
  template <typename U>
  HugePageAllocator(const HugePageAllocator<U>&) {}  // NOLINT: allocators convert implicitly

  T* allocate(size_t n) {
    size_t bytes = n * sizeof(T);
    if (bytes < kFrom) return std::allocator<T>().allocate(n);
    size_t rounded = (bytes + kPage - 1) & ~(kPage - 1);
    void* p = std::aligned_alloc(kPage, rounded);
    if (p == nullptr) throw std::bad_alloc();
    ::madvise(p, rounded, MADV_HUGEPAGE);
    return static_cast<T*>(p);
  }
  void deallocate(T* p, size_t n) {
    if (n * sizeof(T) < kFrom) std::allocator<T>().deallocate(p, n);
    else std::free(p);
  }
  template <typename U>
  bool operator==(const HugePageAllocator<U>&) const {
    return true;
  }
};

template <typename T>
using HugeVector = std::vector<T, HugePageAllocator<T>>;

}  // namespace sheaf
