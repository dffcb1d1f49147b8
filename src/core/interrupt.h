// The interrupt flag: set by the command line's handler of SIGINT, SIGTERM,
// SIGHUP and SIGPIPE, read by every long loop (readers of each pass, the merge
// learner) and by every read of the input (which also waits on a pipe in
// slices of 100 ms), which then stop with a kInterrupted error within a
// second. Partial files are removed
// as their writers unwind; no run record is written.
#pragma once

#include <atomic>

#include "core/error.h"

namespace sheaf {

inline std::atomic<bool>& interrupt_requested() {
  static std::atomic<bool> flag{false};
  return flag;
}

inline Error interrupted_error() {
  return Error(ErrorKind::kInterrupted, "interrupted; partial files were removed and no run record was written");
}

// Throws (to unwind a oneTBB pipeline) when an interrupt was requested.
inline void throw_if_interrupted() {
  if (interrupt_requested().load(std::memory_order_relaxed)) throw ErrorException{interrupted_error()};
}

}  // namespace sheaf
