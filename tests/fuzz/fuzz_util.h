// Helpers for the fuzz targets: a file in memory (memfd) that the readers
// open by path, so no target touches the disk.
#pragma once

#include <sys/mman.h>
#include <unistd.h>

#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <string>

namespace sheaf::fuzz {

class MemFile {
 public:
  MemFile(const uint8_t* data, size_t size) {
    fd_ = ::memfd_create("sheaf-fuzz", MFD_CLOEXEC);
    size_t done = 0;
    while (done < size) {
      ssize_t w = ::write(fd_, data + done, size - done);
      if (w <= 0) break;
      done += static_cast<size_t>(w);
    }
  }
  ~MemFile() { ::close(fd_); }
  std::string path() const { return "/proc/self/fd/" + std::to_string(fd_); }

 private:
  int fd_ = -1;
};

// Aborts with a message when an invariant does not hold (a finding).
#define SHEAF_FUZZ_CHECK(cond)                                              \
  do {                                                                      \
    if (!(cond)) {                                                          \
      std::fprintf(stderr, "invariant failed: %s (%s:%d)\n", #cond, __FILE__, __LINE__); \
      std::abort();                                                         \
    }                                                                       \
  } while (0)

}  // namespace sheaf::fuzz
