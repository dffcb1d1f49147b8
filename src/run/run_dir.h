// RunDir: the output directory of a run.
//
// A directory is "a previous sheaf run" when it holds a manifest.json that is
// a sheaf run record (format "sheaf-run-record", checked by its reader) or
// the marker file .sheaf-run (written first by every run, and appended with
// every file the run creates, so even a run killed with kill -9 can be
// cleaned up). prepare():
//   - takes an exclusive lock (flock) on .sheaf-lock, which holds the
//     process id of the run that holds it, so two runs can never write into
//     one directory at once; the lock is released when the last copy of the
//     RunDir goes (or the process ends);
//   - creates a missing directory;
//   - accepts an empty one;
//   - replaces a previous run: removes exactly the files its manifest and
//     marker list (relative paths inside the directory, never through a
//     symbolic link), and leftover *.partial files;
//   - refuses anything else unless `force`, and then still removes only
//     the files a previous run listed; a manifest.json that is not a sheaf
//     record is never overwritten, even with `force`.
// No file is ever created through a symbolic link: will_create() refuses a
// path whose folders are links, and files are opened with O_NOFOLLOW.
// Every file-system failure is an error value naming the path.
#pragma once

#include <cstdio>
#include <memory>
#include <string>
#include <string_view>

#include "core/error.h"

namespace sheaf {

class RunDir {
 public:
  // The directory's lock, taken before anything else of a run (before its
  // input is opened, which can wait on a pipe), so that a run that waits
  // can never clean a directory another run has finished in the meantime.
  struct Lock {
    std::shared_ptr<const int> fd;  // the locked file's descriptor
    bool had_file = false;          // .sheaf-lock was there before
    bool created_dir = false;       // the directory was made for this run
  };
  // Creates a missing directory and takes its lock, or says which process
  // holds it.
  static Result<Lock> lock(const std::string& dir);
  // Lets go of a lock when the run stops before prepare() (its input could
  // not be opened): the directory is left as it was found.
  static void abandon(const std::string& dir, Lock& lock);
  // Checks and cleans the directory (see above), under `lock`.
  static Result<RunDir> prepare(const std::string& dir, bool force, Lock lock);

  const std::string& path() const { return dir_; }
  std::string file(const std::string& rel) const { return dir_ + "/" + rel; }
  // Records that the run is about to create `rel` (appends to the marker)
  // and creates its folders; an error if one of them is a symbolic link.
  Status will_create(const std::string& rel) const;

 private:
  std::string dir_;
  std::shared_ptr<const int> lock_;  // the locked file's descriptor
};

struct OutputEntry;
struct RunRecord;

// Writes a whole output file atomically and lists it in the run record;
// `entry` gives its path, kind, split, side and record count (size and
// checksum are filled in).
Status write_output(const RunDir& dir, RunRecord& rec, OutputEntry entry, std::string_view bytes);

}  // namespace sheaf
