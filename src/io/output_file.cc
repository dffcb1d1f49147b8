#include "io/output_file.h"

#include <fcntl.h>
#include <unistd.h>

#include <cerrno>
#include <cstdio>
#include <cstring>
#include <vector>

namespace sheaf {

namespace {
Error write_error(const std::string& path, int err) {
  std::string hint = err == ENOSPC ? "the disk is full; free space or choose another --out"
                     : err == EDQUOT ? "the disk quota is exhausted"
                     : err == EFBIG  ? "the file is larger than allowed (ulimit -f?)"
                                     : "check permissions and space";
  return Error(ErrorKind::kIo, std::string("cannot write output: ") + std::strerror(err) + "; " + hint,
               Location{path, 0, 0, {}});
}
}  // namespace

OutputFile::~OutputFile() {
  if (fd_ >= 0) discard();
  if (xxh_) XXH3_freeState(xxh_);
}

Status OutputFile::open(const std::string& path) {
  path_ = path;
  // A leftover ".partial" (or a link planted under that name) is removed,
  // never written through: the new file is created afresh, and the open
  // fails rather than follow a link that appears in between.
  std::string partial = path + ".partial";
  if (::unlink(partial.c_str()) != 0 && errno != ENOENT) return write_error(path, errno);
  fd_ = ::open(partial.c_str(), O_WRONLY | O_CREAT | O_EXCL | O_NOFOLLOW | O_CLOEXEC, 0644);
  if (fd_ < 0) return write_error(path, errno);
  xxh_ = XXH3_createState();
  XXH3_64bits_reset(xxh_);
  return {};
}

void OutputFile::write_slow(std::string_view bytes) {
  if (buf_.size() + bytes.size() > kBuffer) flush();
  if (bytes.size() >= kBuffer) {
    if (fd_ >= 0) put(bytes.data(), bytes.size());
    return;
  }
  if (buf_.capacity() < kBuffer) buf_.reserve(kBuffer);
  buf_.append(bytes);
}

void OutputFile::flush() {
  if (buf_.empty() || fd_ < 0) return;
  put(buf_.data(), buf_.size());
  buf_.clear();
}

void OutputFile::write_now(std::string_view bytes) {
  flush();
  if (fd_ >= 0) put(bytes.data(), bytes.size());
}

void OutputFile::put(const char* p, size_t left) {
  XXH3_64bits_update(xxh_, p, left);
  size_ += left;
  if (error_) return;
  while (left > 0) {
    ssize_t w = ::write(fd_, p, left);
    if (w < 0 && errno == EINTR) continue;
    if (w < 0) {
      error_ = write_error(path_, errno);
      break;
    }
    p += w;
    left -= static_cast<size_t>(w);
  }
}

Status OutputFile::commit() {
  flush();
  if (!error_ && ::fsync(fd_) != 0 && errno != EINVAL) error_ = write_error(path_, errno);
  if (::close(fd_) != 0 && !error_) error_ = write_error(path_, errno);
  fd_ = -1;
  if (error_) {
    ::unlink((path_ + ".partial").c_str());
    return *error_;
  }
  digest_ = XXH3_64bits_digest(xxh_);
  if (std::rename((path_ + ".partial").c_str(), path_.c_str()) != 0) return write_error(path_, errno);
  committed_ = true;
  return {};
}

OutputFile::Mark OutputFile::mark() {
  Mark m;
  if (fd_ < 0) return m;
  flush();
  m.size = size_;
  m.records = records_;
  m.state = std::shared_ptr<XXH3_state_t>(XXH3_createState(), XXH3_freeState);
  XXH3_copyState(m.state.get(), xxh_);
  return m;
}

Status OutputFile::rewind(const Mark& m) {
  if (fd_ < 0) return Error(ErrorKind::kInternal, "rewind of a file that is not open", Location{path_, 0, 0, {}});
  buf_.clear();
  if (!error_ && (::ftruncate(fd_, static_cast<off_t>(m.size)) != 0 ||
                  ::lseek(fd_, static_cast<off_t>(m.size), SEEK_SET) < 0))
    error_ = write_error(path_, errno);
  size_ = m.size;
  records_ = m.records;
  if (m.state) XXH3_copyState(xxh_, m.state.get());
  else XXH3_64bits_reset(xxh_);
  return status();
}

void OutputFile::discard() {
  // Only a partial file this object created and still holds is removed: a
  // file never opened (path_ empty) must not unlink ".partial" in the
  // current directory, and a committed one has no partial file left.
  if (fd_ < 0) return;
  ::close(fd_);
  fd_ = -1;
  ::unlink((path_ + ".partial").c_str());
}

Result<uint64_t> checksum_file(const std::string& path, uint64_t* size) {
  int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
  if (fd < 0)
    return Error(ErrorKind::kIo, std::string("cannot read: ") + std::strerror(errno), Location{path, 0, 0, {}});
  XXH3_state_t* st = XXH3_createState();
  XXH3_64bits_reset(st);
  std::vector<char> buf(1 << 20);
  uint64_t total = 0;
  for (;;) {
    ssize_t r = ::read(fd, buf.data(), buf.size());
    if (r < 0 && errno == EINTR) continue;
    if (r <= 0) break;
    XXH3_64bits_update(st, buf.data(), static_cast<size_t>(r));
    total += static_cast<uint64_t>(r);
  }
  ::close(fd);
  uint64_t d = XXH3_64bits_digest(st);
  XXH3_freeState(st);
  if (size) *size = total;
  return d;
}

std::string hex64(uint64_t v) {
  char buf[17];
  std::snprintf(buf, sizeof buf, "%016llx", static_cast<unsigned long long>(v));
  return buf;
}

}  // namespace sheaf
