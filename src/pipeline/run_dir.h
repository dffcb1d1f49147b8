// RunDir: the output directory of a run.
//
// A directory is "a previous sheaf run" when it holds manifest.json written
// by sheaf or the marker file .sheaf-run (written first by every run, and
// appended with every file the run creates, so even a run killed with
// kill -9 can be cleaned up). prepare():
//   - creates a missing directory;
//   - accepts an empty one;
//   - replaces a previous run: removes exactly the files its manifest and
//     marker list (relative paths inside the directory, never through a
//     symbolic link that leads out of it), and leftover *.partial files;
//   - refuses anything else unless `force`, and then still removes only
//     the files a previous run listed.
#pragma once

#include <cstdio>
#include <string>
#include <string_view>

#include "core/error.h"

namespace sheaf {

class RunDir {
 public:
  static Result<RunDir> prepare(const std::string& dir, bool force);

  const std::string& path() const { return dir_; }
  std::string file(const std::string& rel) const { return dir_ + "/" + rel; }
  // Records that the run is about to create `rel` (appends to the marker).
  Status will_create(const std::string& rel) const;

 private:
  std::string dir_;
};

struct OutputEntry;
struct RunRecord;

// Writes a whole output file atomically and lists it in the run record;
// `entry` gives its path, kind, split, side and record count (size and
// checksum are filled in).
Status write_output(const RunDir& dir, RunRecord& rec, OutputEntry entry, std::string_view bytes);

}  // namespace sheaf
