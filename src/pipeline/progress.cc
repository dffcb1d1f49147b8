#include "pipeline/progress.h"

#include <chrono>
#include <cstdio>

namespace sheaf {

Progress::Progress(bool on, const std::atomic<uint64_t>& bytes, const std::atomic<uint64_t>& pairs)
    : on_(on), bytes_(bytes), pairs_(pairs) {
  if (on_) thread_ = std::thread([this] { loop(); });
}

void Progress::stop() {
  if (!on_) return;
  done_ = true;
  thread_.join();
  on_ = false;
  std::fprintf(stderr, "\r\033[K");
}

void Progress::loop() {
  auto start = std::chrono::steady_clock::now();
  while (!done_) {
    std::this_thread::sleep_for(std::chrono::milliseconds(100));
    if (++tick_ % 5 != 0) continue;
    double secs = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
    double mb = static_cast<double>(bytes_.load()) / 1e6;
    std::fprintf(stderr, "\r\033[Kcleaning: %.1f MB, %llu pairs read (%.1f MB/s)", mb,
                 static_cast<unsigned long long>(pairs_.load()), secs > 0 ? mb / secs : 0.0);
    std::fflush(stderr);
  }
}

}  // namespace sheaf
