#include "run/run_dir.h"

#include <fcntl.h>
#include <sys/file.h>
#include <unistd.h>

#include <cerrno>
#include <cstring>
#include <filesystem>
#include <set>

#include "io/output_file.h"
#include "run/run_record.h"

namespace fs = std::filesystem;

namespace sheaf {

namespace {

constexpr const char* kMarker = ".sheaf-run";
constexpr const char* kLock = ".sheaf-lock";
constexpr std::string_view kMarkerHeader = "sheaf run directory: files this run creates follow\n";

Error fs_error(ErrorKind kind, const std::string& what, const std::error_code& ec, const std::string& path) {
  return Error(kind, what + ": " + ec.message(), Location{path, 0, 0, {}});
}

// True when `rel` names a path inside `dir` that does not pass through a
// symbolic link.
bool safe_inside(const fs::path& dir, const std::string& rel) {
  if (rel.empty() || rel.front() == '/') return false;
  fs::path p(rel);
  fs::path cur = dir;
  for (const auto& part : p) {
    if (part == ".." || part == ".") return false;
    std::error_code ec;
    if (cur != dir && fs::is_symlink(cur, ec)) return false;
    cur /= part;
  }
  return true;
}

// Reads a small file without following a symbolic link; nullopt-like false
// when it cannot.
bool read_small(const fs::path& path, std::string& out) {
  int fd = ::open(path.c_str(), O_RDONLY | O_NOFOLLOW | O_CLOEXEC);
  if (fd < 0) return false;
  char buf[65536];
  for (;;) {
    ssize_t r = ::read(fd, buf, sizeof buf);
    if (r < 0 && errno == EINTR) continue;
    if (r <= 0) break;
    out.append(buf, static_cast<size_t>(r));
    if (out.size() > (64u << 20)) break;
  }
  ::close(fd);
  return true;
}

Status write_marker(const fs::path& path, std::string_view text, bool append, const std::string& dir) {
  int fd = ::open(path.c_str(), O_WRONLY | O_CREAT | O_NOFOLLOW | O_CLOEXEC | (append ? O_APPEND : O_TRUNC), 0644);
  bool ok = fd >= 0;
  int err = errno;
  if (ok) {
    ok = ::write(fd, text.data(), text.size()) == static_cast<ssize_t>(text.size());
    err = errno;
    ::close(fd);
  }
  if (!ok)
    return Error(ErrorKind::kIo, std::string("cannot write in the output directory: ") + std::strerror(err),
                 Location{dir, 0, 0, {}});
  return {};
}

// Takes the directory's lock, or says which process holds it.
Result<std::shared_ptr<const int>> lock_dir(const fs::path& d, const std::string& dir) {
  fs::path path = d / kLock;
  int fd = ::open(path.c_str(), O_RDWR | O_CREAT | O_NOFOLLOW | O_CLOEXEC, 0644);
  if (fd < 0)
    return Error(ErrorKind::kIo,
                 std::string("cannot use the output directory: ") + std::strerror(errno) +
                     "; check its permissions or choose another --out",
                 Location{dir, 0, 0, {}});
  if (::flock(fd, LOCK_EX | LOCK_NB) != 0) {
    int err = errno;
    std::string holder;
    char buf[32] = {};
    ssize_t r = ::pread(fd, buf, sizeof buf - 1, 0);
    if (r > 0) holder = std::string(buf, static_cast<size_t>(r));
    while (!holder.empty() && (holder.back() == '\n' || holder.back() == ' ')) holder.pop_back();
    ::close(fd);
    if (err == EWOULDBLOCK)
      return Error(ErrorKind::kIo,
                   "another sheaf run (process " + (holder.empty() ? std::string("unknown") : holder) +
                       ") is writing to this directory; wait for it to end or choose another --out",
                   Location{dir, 0, 0, {}});
    return Error(ErrorKind::kIo, std::string("cannot lock the output directory: ") + std::strerror(err),
                 Location{dir, 0, 0, {}});
  }
  std::string pid = std::to_string(::getpid()) + "\n";
  if (::ftruncate(fd, 0) != 0 || ::pwrite(fd, pid.data(), pid.size(), 0) != static_cast<ssize_t>(pid.size())) {
    int err = errno;
    ::close(fd);
    return Error(ErrorKind::kIo, std::string("cannot write in the output directory: ") + std::strerror(err),
                 Location{dir, 0, 0, {}});
  }
  // Emptied when the run lets go, so a finished run leaves the same bytes
  // whatever its process id (after kill -9 the id stays, harmlessly).
  return std::shared_ptr<const int>(new int(fd), [](const int* p) {
    if (::ftruncate(*p, 0) != 0) {
      // Nothing to do: the lock is released by close() all the same.
    }
    ::close(*p);
    delete p;
  });
}

}  // namespace

Result<RunDir::Lock> RunDir::lock(const std::string& dir) {
  std::error_code ec;
  fs::path d(dir);
  auto st = fs::symlink_status(d, ec);
  if (ec && ec != std::errc::no_such_file_or_directory)
    return fs_error(ErrorKind::kIo, "cannot use the output directory", ec, dir);
  if (fs::exists(st) && !fs::is_directory(fs::status(d, ec)))
    return Error(ErrorKind::kUsage, "the output path exists and is not a directory; choose another --out",
                 Location{dir, 0, 0, {}});
  Lock held;
  if (!fs::exists(st)) {
    fs::create_directories(d, ec);
    if (ec) return fs_error(ErrorKind::kIo, "cannot create the output directory", ec, dir);
    held.created_dir = true;
  }
  // A directory sheaf refuses keeps no lock file it did not have before.
  held.had_file = fs::exists(fs::symlink_status(d / kLock, ec));
  auto fd = lock_dir(d, dir);
  if (!fd.ok()) return fd.error();
  held.fd = std::move(fd.value());
  return held;
}

void RunDir::abandon(const std::string& dir, Lock& lock) {
  fs::path d(dir);
  if (!lock.had_file) ::unlink((d / kLock).c_str());
  lock.fd.reset();
  if (lock.created_dir) ::rmdir(d.c_str());  // only if nothing else is in it
}

Result<RunDir> RunDir::prepare(const std::string& dir, bool force, Lock lock) {
  std::error_code ec;
  fs::path d(dir);
  auto refuse = [&](Error e) -> Error {
    if (!lock.had_file) ::unlink((d / kLock).c_str());
    return e;
  };

  // What is there (the lock file aside)?
  bool empty = true;
  fs::directory_iterator it(d, ec);
  if (ec) return fs_error(ErrorKind::kIo, "cannot read the output directory", ec, dir);
  for (; it != fs::directory_iterator(); it.increment(ec)) {
    if (it->path().filename() != kLock) empty = false;
  }
  if (ec) return fs_error(ErrorKind::kIo, "cannot read the output directory", ec, dir);

  std::set<std::string> listed;
  bool has_manifest = fs::exists(fs::symlink_status(d / "manifest.json", ec));
  bool sheaf_manifest = false;
  if (has_manifest) {
    auto outs = read_manifest_outputs((d / "manifest.json").string());
    if (outs.ok()) {
      sheaf_manifest = true;
      for (const auto& o : *outs) listed.insert(o.path);
      listed.insert("manifest.json");
    }
  }
  std::string marker_text;
  bool marker = read_small(d / kMarker, marker_text) && marker_text.starts_with(kMarkerHeader);
  if (marker) {
    size_t pos = kMarkerHeader.size();
    while (pos < marker_text.size()) {
      size_t nl = marker_text.find('\n', pos);
      if (nl == std::string::npos) break;  // a line cut short by kill -9
      if (nl > pos) listed.insert(marker_text.substr(pos, nl - pos));
      pos = nl + 1;
    }
  }
  if (has_manifest && !sheaf_manifest)
    return refuse(Error(ErrorKind::kUsage,
                 std::string("the output directory holds a manifest.json that is not a sheaf run record; it is not a "
                             "sheaf run") +
                     (force ? ", and sheaf would overwrite that file: move it away or choose another --out"
                            : ": choose an empty directory or another --out"),
                 Location{dir, 0, 0, {}}));
  if (!empty && !sheaf_manifest && !marker && !force)
    return refuse(Error(ErrorKind::kUsage,
                        "the output directory holds files that are not a sheaf run; choose an empty directory, or "
                        "pass --force to write into it (only files a previous sheaf run listed are ever removed)",
                        Location{dir, 0, 0, {}}));
  for (const auto& rel : listed) {
    if (!safe_inside(d, rel)) continue;
    for (const std::string& name : {rel, rel + ".partial"}) {
      fs::path p = d / name;
      auto s = fs::symlink_status(p, ec);
      if (fs::is_symlink(s) || fs::is_regular_file(s)) {
        fs::remove(p, ec);
        if (ec) return fs_error(ErrorKind::kIo, "cannot remove a file of the previous run", ec, p.string());
      }
    }
  }
  RunDir r;
  r.dir_ = dir;
  r.lock_ = std::move(lock.fd);
  SHEAF_TRY(write_marker(d / kMarker, kMarkerHeader, false, dir));
  return r;
}

Status RunDir::will_create(const std::string& rel) const {
  fs::path d(dir_);
  // Folders of the new file: never a symbolic link (a link left in a
  // previous run's directory would send the file elsewhere).
  fs::path cur = d;
  fs::path parent = fs::path(rel).parent_path();
  for (const auto& part : parent) {
    cur /= part;
    std::error_code ec;
    auto s = fs::symlink_status(cur, ec);
    if (fs::is_symlink(s))
      return Error(ErrorKind::kIo,
                   "this is a symbolic link; sheaf never writes through links in its output directory: remove the "
                   "link or choose another --out",
                   Location{cur.string(), 0, 0, {}});
    if (!fs::exists(s)) {
      fs::create_directory(cur, ec);
      if (ec) return fs_error(ErrorKind::kIo, "cannot create a folder of the output", ec, cur.string());
    }
  }
  return write_marker(d / kMarker, rel + "\n", true, dir_);
}

Status write_output(const RunDir& dir, RunRecord& rec, OutputEntry entry, std::string_view bytes) {
  SHEAF_TRY(dir.will_create(entry.path));
  OutputFile f;
  SHEAF_TRY(f.open(dir.file(entry.path)));
  f.write(bytes);
  SHEAF_TRY(f.commit());
  entry.size = f.size();
  entry.checksum = f.checksum();
  rec.outputs.push_back(std::move(entry));
  return {};
}

}  // namespace sheaf
