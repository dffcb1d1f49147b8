// Happens-before annotations for ThreadSanitizer where oneTBB hands work
// from one thread to another. Debian's libtbb is not built with
// -fsanitize=thread, so its scheduler's synchronization is invisible to TSan:
// without these, every batch passed from one pipeline filter to the next,
// and everything read after an algorithm returns, is reported as a race.
// Each annotation states an ordering that oneTBB guarantees, and no more, so
// a real race between two bodies that oneTBB may run at once is still seen.
// Outside a TSan build everything here compiles to nothing.
#pragma once

#if defined(__SANITIZE_THREAD__)
#define SHEAF_UNDER_TSAN 1
#elif defined(__has_feature)
#if __has_feature(thread_sanitizer)
#define SHEAF_UNDER_TSAN 1
#endif
#endif

#ifdef SHEAF_UNDER_TSAN
#include <sanitizer/tsan_interface.h>
#endif

namespace sheaf {

// handoff_release(p) in the thread that hands `p` (or the state it stands
// for) on; handoff_acquire(p) in the thread that takes it. What the first
// thread did before the release happens before what the second does after
// the acquire (sanitizer/tsan_interface.h: __tsan_release, __tsan_acquire).
#ifdef SHEAF_UNDER_TSAN
inline void handoff_release(const void* p) { __tsan_release(const_cast<void*>(p)); }
inline void handoff_acquire(const void* p) { __tsan_acquire(const_cast<void*>(p)); }
#else
inline void handoff_release(const void*) {}
inline void handoff_acquire(const void*) {}
#endif

// The edges of a run of a oneTBB pipeline: everything the calling thread did
// before the call happens before every filter body, and every body happens
// before everything after the call, whether it returns or throws. A body
// must take its edge before it reads anything the calling thread wrote, its
// own captures included, so the edges are one pair for the process rather
// than one per run; runs on different threads at once (sheaf has none) would
// be ordered more than oneTBB orders them, never less.
//
//   pool.run_pipeline(                       // a TaskRun around the call
//       tbb::make_filter<void, Batch*>(serial_in_order, [&](tbb::flow_control& fc) {
//         TaskBody body;
//         SerialTurn turn(&reader);          // the state serial calls share
//         Batch* b = pool.acquire();         // handed over by the pool
//         ...
//         handoff_release(b);
//         return b;
//       }) &
//       tbb::make_filter<Batch*, void>(parallel, [&](Batch* b) {
//         TaskBody body;
//         handoff_acquire(b);
//         ...
//         pool.release(b);
//       }));
//
// tbb::parallel_for cannot be annotated this way: its task tree lives in
// oneTBB's headers and is handed over inside libtbb after a body's last line,
// which TSan reports as races in oneTBB's own code (docs/reliability.md).

namespace tsan_detail {
inline char run_start, run_end;  // only their addresses are used
}  // namespace tsan_detail

// In the calling thread, spanning the algorithm's call.
class TaskRun {
 public:
  TaskRun() { handoff_release(&tsan_detail::run_start); }
  ~TaskRun() { handoff_acquire(&tsan_detail::run_end); }
  TaskRun(const TaskRun&) = delete;
  TaskRun& operator=(const TaskRun&) = delete;
};

// The first statement of every body.
class TaskBody {
 public:
  TaskBody() { handoff_acquire(&tsan_detail::run_start); }
  ~TaskBody() { handoff_release(&tsan_detail::run_end); }
  TaskBody(const TaskBody&) = delete;
  TaskBody& operator=(const TaskBody&) = delete;
};

// In a serial filter's body, after its TaskBody: `state` passes from this
// invocation to the next.
class SerialTurn {
 public:
  explicit SerialTurn(const void* state) : state_(state) { handoff_acquire(state_); }
  ~SerialTurn() { handoff_release(state_); }
  SerialTurn(const SerialTurn&) = delete;
  SerialTurn& operator=(const SerialTurn&) = delete;

 private:
  const void* state_;
};

}  // namespace sheaf
