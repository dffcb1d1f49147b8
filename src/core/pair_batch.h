// PairBatch: the unit of work that flows through the runner.
//
// A batch owns the raw input lines it was cut from (`raw`, plus `raw_target`
// for two-file input) and an arena for rewritten text. Each Pair holds views
// of its raw line(s) and of the current source and target text; a stage that
// rewrites a side writes into the arena and moves the view, untouched text is
// never copied. A pair is dropped by recording the stage index and a reason
// code; later stages skip it. Batches are numbered in input order (`seq`) so
// that serial stages and writers see them in that order.
#pragma once

#include <array>
#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "core/arena.h"

namespace sheaf {

enum Side : int { kSource = 0, kTarget = 1 };
inline const char* side_name(int side) { return side == kSource ? "source" : "target"; }

// Stage index used for drops made while reading (bad TSV, oversize line...).
inline constexpr int kReadStage = -1;
inline constexpr int kKept = -2;
// Drops made by the runner's final check that output fields are valid TSV.
inline constexpr int kOutputStage = -3;

inline constexpr uint32_t kUnmeasured = UINT32_MAX;

struct Pair {
  uint64_t line = 0;             // 1-based input line (pair index for two files)
  uint32_t corpus = 0;           // index of its corpus in Pipeline::corpora
  std::string_view raw;          // original line, or the source line (two files)
  std::string_view raw_target;   // the target line (two files only)
  // Current source and target text. Stages that rewrite a side call
  // set_text(), which forgets the lengths measured on the old text.
  std::array<std::string_view, 2> text;
  // Lengths of the current text, measured once by whichever stage needs them
  // first (kUnmeasured until then) and reused by later stages and statistics.
  std::array<uint32_t, 2> words{kUnmeasured, kUnmeasured};
  std::array<uint32_t, 2> chars{kUnmeasured, kUnmeasured};
  int drop_stage = kKept;
  std::string reason;            // reason code, optionally "code:detail"
  std::array<uint64_t, 2> key{};  // scratch: a stage's hash between its two halves
  int split = 0;                 // split index set by the split stage

  bool kept() const { return drop_stage == kKept; }
  void set_text(int side, std::string_view t) {
    text[static_cast<size_t>(side)] = t;
    words[static_cast<size_t>(side)] = kUnmeasured;
    chars[static_cast<size_t>(side)] = kUnmeasured;
  }
};

struct PairBatch {
  uint64_t seq = 0;
  uint64_t input_bytes = 0;      // bytes of input this batch covers
  std::string raw;               // raw bytes the pairs' raw views point into
  std::string raw_target;
  Arena arena;
  std::vector<Pair> pairs;
  // Scratch for a stage's wider per-pair values between its map() and its
  // reduce() (near_dup's band keys); the runner never reads it.
  std::vector<uint64_t> scratch;

  void drop(Pair& p, int stage, std::string reason) {
    p.drop_stage = stage;
    p.reason = std::move(reason);
  }
};

}  // namespace sheaf
