// Progress: one line on standard error, twice a second, while a pass reads
// its input ("cleaning: 120.5 MB, 1034211 pairs read (98.2 MB/s)").
//
// A thread of its own reads two counters the pass updates; nothing the pass
// writes depends on it. stop() (or the destructor) ends the thread and clears
// the line. With `on` false it does nothing.
#pragma once

#include <atomic>
#include <cstdint>
#include <thread>

namespace sheaf {

class Progress {
 public:
  Progress(bool on, const std::atomic<uint64_t>& bytes, const std::atomic<uint64_t>& pairs);
  ~Progress() { stop(); }
  Progress(const Progress&) = delete;
  Progress& operator=(const Progress&) = delete;
  void stop();

 private:
  void loop();
  bool on_;
  const std::atomic<uint64_t>& bytes_;
  const std::atomic<uint64_t>& pairs_;
  std::atomic<bool> done_{false};
  int tick_ = 0;
  std::thread thread_;
};

}  // namespace sheaf
