// Error: what went wrong and where, as a value.
//
// Every fallible operation in sheaf returns a Result<T> (or Status, a
// Result<void>) rather than throwing across an API. An Error carries a kind
// (which decides the exit status), a message written for the user (what is
// wrong and what to do), and a Location that is as precise as the failing
// layer knows: file, 1-based line and column, byte offset. Library errors
// (ICU, re2, toml++, zlib, zstd, errno) are converted at the boundary.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <utility>
#include <variant>

namespace sheaf {

enum class ErrorKind {
  kUsage,        // bad command line: exit 2
  kPipeline,     // bad pipeline file: exit 2
  kInput,        // unreadable or malformed input as a whole: exit 1
  kIo,           // read/write failure, full disk: exit 1
  kData,         // data makes the run impossible (empty train split): exit 1
  kInterrupted,  // SIGINT/SIGTERM: exit 1
  kInternal,     // a bug: exit 1
};

struct Location {
  std::string file;
  uint64_t line = 0;    // 1-based; 0 = unknown
  uint64_t column = 0;  // 1-based; 0 = unknown
  std::optional<uint64_t> byte_offset;

  bool empty() const { return file.empty() && line == 0 && !byte_offset; }
};

class Error {
 public:
  Error(ErrorKind kind, std::string message, Location where = {})
      : kind_(kind), message_(std::move(message)), where_(std::move(where)) {}

  ErrorKind kind() const { return kind_; }
  const std::string& message() const { return message_; }
  const Location& where() const { return where_; }

  // "file:line:column: message" (parts that are unknown are left out;
  // a byte offset is appended as "(byte N)").
  std::string describe() const;
  // 2 for usage and pipeline-file errors, 1 for everything else.
  int exit_status() const;

 private:
  ErrorKind kind_;
  std::string message_;
  Location where_;
};

// A value or an Error. Small on purpose: ok(), value(), error(), and
// conversion from either side.
template <typename T>
class [[nodiscard]] Result {
 public:
  Result(T value) : v_(std::move(value)) {}  // NOLINT: implicit by design
  Result(Error error) : v_(std::move(error)) {}  // NOLINT

  bool ok() const { return v_.index() == 0; }
  explicit operator bool() const { return ok(); }
  T& value() & { return std::get<0>(v_); }
  const T& value() const& { return std::get<0>(v_); }
  T&& value() && { return std::get<0>(std::move(v_)); }
  T* operator->() { return &value(); }
  const T* operator->() const { return &value(); }
  T& operator*() & { return value(); }
  T&& operator*() && { return std::move(*this).value(); }
  const Error& error() const { return std::get<1>(v_); }

 private:
  std::variant<T, Error> v_;
};

class [[nodiscard]] Status {
 public:
  Status() = default;
  Status(Error error) : e_(std::move(error)) {}  // NOLINT
  static Status Ok() { return {}; }
  bool ok() const { return !e_.has_value(); }
  explicit operator bool() const { return ok(); }
  const Error& error() const { return *e_; }

 private:
  std::optional<Error> e_;
};

// Used only to unwind through oneTBB's parallel_pipeline, which propagates
// exceptions from filters; the runner turns it back into a Status.
struct ErrorException {
  Error error;
};

#define SHEAF_TRY(expr)                     \
  do {                                      \
    ::sheaf::Status sheaf_st_ = (expr);     \
    if (!sheaf_st_.ok()) return sheaf_st_.error(); \
  } while (0)

}  // namespace sheaf
