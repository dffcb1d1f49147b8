// Helpers shared by the tests: temporary directories, files, running the
// sheaf binary.
#pragma once

#include <gtest/gtest.h>
#include <unicode/utf8.h>

#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <sys/wait.h>
#include <unistd.h>
#include <vector>

namespace sheaf::test {

namespace fs = std::filesystem;

// The UTF-8 bytes of one code point (ICU's encoder).
inline std::string utf8_of(UChar32 c) {
  char buf[4];
  int32_t n = 0;
  U8_APPEND_UNSAFE(buf, n, c);
  return std::string(buf, static_cast<size_t>(n));
}

inline std::string source_dir() { return SHEAF_SOURCE_DIR; }
// SHEAF_TEST_BINARY runs the tests against another build (to see a new test
// fail on the code before its fix).
inline std::string binary() {
  const char* other = std::getenv("SHEAF_TEST_BINARY");
  return other != nullptr && *other != 0 ? other : SHEAF_BINARY;
}

class TempDir {
 public:
  TempDir() {
    std::string tmpl = (fs::temp_directory_path() / "sheaf-test-XXXXXX").string();
    std::vector<char> buf(tmpl.begin(), tmpl.end());
    buf.push_back(0);
    path_ = ::mkdtemp(buf.data());
  }
  ~TempDir() {
    std::error_code ec;
    fs::remove_all(path_, ec);
  }
  std::string operator/(const std::string& rel) const { return (fs::path(path_) / rel).string(); }
  const std::string& path() const { return path_; }

 private:
  std::string path_;
};

inline void write_file(const std::string& path, const std::string& bytes) {
  fs::create_directories(fs::path(path).parent_path());
  std::ofstream out(path, std::ios::binary);
  out << bytes;
}

inline std::string read_file(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

inline std::vector<std::string> lines_of(const std::string& text) {
  std::vector<std::string> out;
  size_t start = 0;
  while (start < text.size()) {
    size_t nl = text.find('\n', start);
    if (nl == std::string::npos) nl = text.size();
    out.push_back(text.substr(start, nl - start));
    start = nl + 1;
  }
  return out;
}

struct Ran {
  int status = -1;
  std::string out, err;
};

// Runs a shell command line, capturing standard output and error.
inline Ran run_shell(const std::string& cmd) {
  TempDir t;
  std::string full = cmd + " >" + (t / "out") + " 2>" + (t / "err");
  int rc = std::system(full.c_str());
  Ran r;
  r.status = WIFEXITED(rc) ? WEXITSTATUS(rc) : -1;
  r.out = read_file(t / "out");
  r.err = read_file(t / "err");
  return r;
}

inline Ran run_sheaf(const std::string& args) { return run_shell(binary() + " " + args); }

// Starts the sheaf binary with `args` in the background, standard error to
// `err_path`, standard output discarded; returns the child's process id.
inline pid_t start_sheaf(const std::string& args, const std::string& err_path) {
  pid_t pid = ::fork();
  if (pid == 0) {
    FILE* e = std::freopen(err_path.c_str(), "w", stderr);
    (void)e;
    FILE* o = std::freopen("/dev/null", "w", stdout);
    (void)o;
    ::execl("/bin/sh", "sh", "-c", ("exec " + binary() + " " + args).c_str(), nullptr);
    ::_exit(127);
  }
  return pid;
}

// A pipeline file with the given corpus section and stages.
inline std::string pipeline_text(const std::string& corpus, const std::string& stages, const std::string& out = "out") {
  return "sheaf = 1\n[corpus]\n" + corpus + "\n[output]\ndir = \"" + out + "\"\n" + stages;
}

}  // namespace sheaf::test
