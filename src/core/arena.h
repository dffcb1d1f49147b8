// Arena: bump allocation for text that stages rewrite. Views into an arena stay
// valid until the arena is destroyed or reset; nothing is freed one by one.
// Not thread-safe: one arena belongs to one batch.
#pragma once

#include <cstddef>
#include <cstring>
#include <memory>
#include <string_view>
#include <vector>

namespace sheaf {

class Arena {
 public:
  explicit Arena(size_t chunk = 1 << 16) : chunk_(chunk) {}
  Arena(const Arena&) = delete;
  Arena& operator=(const Arena&) = delete;
  Arena(Arena&&) = default;
  Arena& operator=(Arena&&) = default;

  char* allocate(size_t n) {
    if (n > left_) grow(n);
    char* p = cur_;
    cur_ += n;
    left_ -= n;
    return p;
  }
  std::string_view copy(std::string_view s) {
    if (s.empty()) return {};
    char* p = allocate(s.size());
    std::memcpy(p, s.data(), s.size());
    return {p, s.size()};
  }
  void reset() {
    if (blocks_.size() > 1) blocks_.erase(blocks_.begin(), blocks_.end() - 1);
    if (!blocks_.empty()) {
      cur_ = blocks_.back().data.get();
      left_ = blocks_.back().size;
    }
  }

 private:
  struct Block {
    std::unique_ptr<char[]> data;
    size_t size;
  };
  void grow(size_t n) {
    size_t size = n > chunk_ ? n : chunk_;
    blocks_.push_back({std::make_unique<char[]>(size), size});
    cur_ = blocks_.back().data.get();
    left_ = size;
  }
  size_t chunk_;
  std::vector<Block> blocks_;
  char* cur_ = nullptr;
  size_t left_ = 0;
};

}  // namespace sheaf
