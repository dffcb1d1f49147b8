// Schema: the typed description of every key a pipeline file may hold.
//
// Each section ([corpus], [output]) and each stage kind declares its keys once,
// as FieldSpecs: name, type, default, range or choices, and a one-line help.
// The same declaration drives validation (unknown keys, types, ranges, with
// the closest valid name suggested), filling in defaults, `sheaf validate`'s
// resolved output, and `sheaf init`'s commented template, so the four never
// disagree.
#pragma once

#include <cstdint>
#include <limits>
#include <string>
#include <string_view>
#include <variant>
#include <vector>

#include "core/error.h"

namespace sheaf {

class Params;

enum class FieldType {
  kBool,
  kInt,              // integer in [min, max]
  kNumber,           // integer or float in [min, max]
  kString,
  kChoice,           // string, one of `choices`
  kStringList,
  kIntList,         // integers, each in [min, max]
  kFractionOrCount,  // float in [0, 1) = fraction, integer >= 0 = count
  kTableList,        // array of tables, each checked against `sub`
};

struct FieldSpec;
using FieldList = std::vector<FieldSpec>;

using Value = std::variant<bool, int64_t, double, std::string, std::vector<std::string>, std::vector<Params>,
                           std::vector<int64_t>>;

struct FieldSpec {
  std::string key;
  FieldType type;
  Value fallback;          // the default
  std::string help;        // one line, used by init and docs
  double min = -std::numeric_limits<double>::infinity();
  double max = std::numeric_limits<double>::infinity();
  std::vector<std::string> choices;
  const FieldList* sub = nullptr;  // for kTableList
};

struct Param {
  std::string key;
  Value value;
  Location where;  // where the value was written; empty if defaulted
};

// The resolved keys of one section or stage, in schema order.
class Params {
 public:
  const Param* find(std::string_view key) const;
  Param& set(std::string key, Value v, Location where);
  const std::vector<Param>& all() const { return items_; }

  bool flag(std::string_view key) const { return std::get<bool>(get(key)); }
  int64_t integer(std::string_view key) const { return std::get<int64_t>(get(key)); }
  double number(std::string_view key) const;
  const std::string& text(std::string_view key) const { return std::get<std::string>(get(key)); }
  const std::vector<std::string>& list(std::string_view key) const {
    return std::get<std::vector<std::string>>(get(key));
  }
  const std::vector<Params>& tables(std::string_view key) const { return std::get<std::vector<Params>>(get(key)); }
  const std::vector<int64_t>& integers(std::string_view key) const { return std::get<std::vector<int64_t>>(get(key)); }
  Location where(std::string_view key) const;

 private:
  const Value& get(std::string_view key) const;
  std::vector<Param> items_;
};

// Which part of a run a stage belongs to: pass 1 streams pairs through the
// filters and the split stage (stages/stage.h); after it, steps work on
// whole files (run/step.h).
enum class StageRole {
  kFilter,  // streams pairs: rewrites or drops them (pass 1)
  kSplit,   // routes kept pairs to splits (end of pass 1)
  kStep,    // whole-corpus work after pass 1 (learning, shards, ...)
};

struct StageKind {
  std::string kind;
  std::string help;
  StageRole role;
  FieldList fields;
  // Steps only: the products (run/step.h) the step needs, which pass 1 or an
  // earlier step must provide, and those it provides. The loader checks the
  // order of steps from these names alone.
  std::vector<std::string> needs, provides;
  // Filters only: a [[corpus]] may skip the stage or change its keys (false
  // for stages that compare corpora with each other, like deduplication).
  bool varies_per_corpus = true;
  // `sheaf init` writes the stage only when asked (near-dup, with
  // --near-dup); kinds a program registers for itself set this too.
  bool opt_in = false;
};

// Edit distance for "did you mean" suggestions.
std::string closest_name(std::string_view word, const std::vector<std::string>& candidates);

}  // namespace sheaf
