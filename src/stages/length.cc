#include "stages/length.h"

#include <algorithm>

#include "core/text.h"

namespace sheaf {

double length_ratio(size_t a, size_t b, double slack) {
  double hi = static_cast<double>(std::max(a, b)) + slack;
  double lo = static_cast<double>(std::min(a, b)) + slack;
  return lo <= 0 ? 0.0 : hi / lo;
}

namespace {

class LengthStage : public Stage {
 public:
  LengthStage(const StageContext& ctx, LengthOptions o) : index_(ctx.index), o_(o) {}

  void map(PairBatch& batch) override {
    for (Pair& p : batch.pairs) {
      if (!p.kept()) continue;
      bool e0 = p.text[0].empty(), e1 = p.text[1].empty();
      if (e0 || e1) {
        batch.drop(p, index_, e0 && e1 ? "empty:both" : e0 ? "empty:source" : "empty:target");
        continue;
      }
      size_t len[2];
      for (int side = 0; side < 2 && p.kept(); ++side) {
        len[side] = measured(p, side);
        if (static_cast<int64_t>(len[side]) < o_.min[side])
          batch.drop(p, index_, std::string("too-short:") + side_name(side));
        else if (o_.max[side] > 0 && static_cast<int64_t>(len[side]) > o_.max[side])
          batch.drop(p, index_, std::string("too-long:") + side_name(side));
      }
      if (!p.kept()) continue;
      if (o_.max_ratio > 0 && length_ratio(len[0], len[1], o_.ratio_slack) > o_.max_ratio) {
        batch.drop(p, index_, "ratio");
        continue;
      }
      if (o_.max_word_chars > 0) {
        for (int side = 0; side < 2 && p.kept(); ++side)
          if (static_cast<int64_t>(longest_word_fast(p.text[side])) > o_.max_word_chars)
            batch.drop(p, index_, std::string("long-word:") + side_name(side));
      }
    }
  }

 private:
  // The side's length in the stage's unit, cached on the pair.
  size_t measured(Pair& p, int side) const {
    auto s = static_cast<size_t>(side);
    switch (o_.unit) {
      case LengthUnit::kBytes:
        return p.text[s].size();
      case LengthUnit::kChars:
        if (p.chars[s] == kUnmeasured) p.chars[s] = static_cast<uint32_t>(count_code_points(p.text[s]));
        return p.chars[s];
      case LengthUnit::kWords:
        if (p.words[s] == kUnmeasured) {
          size_t chars = 0;
          p.words[s] = static_cast<uint32_t>(count_words(p.text[s], &chars));
          p.chars[s] = static_cast<uint32_t>(chars);  // the same scan measures both
        }
        return p.words[s];
    }
    return 0;
  }
  // The longest word: a run without spaces, measured whole when it is ASCII
  // (so base64 and hashes count as one word even though UAX #29 breaks them
  // at '+' and '/'), else by UAX #29 words within the run (scripts written
  // without spaces). Segmentation runs only on long non-ASCII runs.
  size_t longest_word_fast(std::string_view s) const {
    size_t best = 0;
    size_t limit = static_cast<size_t>(o_.max_word_chars);
    while (!s.empty()) {
      size_t sp = s.find(' ');
      std::string_view run = s.substr(0, sp);
      if (run.size() > limit) best = std::max(best, is_ascii(run) ? run.size() : longest_word(run));
      if (sp == std::string_view::npos) break;
      s.remove_prefix(sp + 1);
    }
    return best;
  }
  int index_;
  LengthOptions o_;
};

}  // namespace

const StageKind& length_kind() {
  static const StageKind k{
      "length",
      "drops empty, too short, too long and badly proportioned pairs",
      StageRole::kFilter,
      {
          {"unit",
           FieldType::kChoice,
           std::string("words"),
           "length unit: words (UAX #29), chars (code points) or bytes",
           0,
           0,
           {"words", "chars", "bytes"}},
          {"source_min", FieldType::kInt, int64_t{1}, "minimum source length", 0, 1e12},
          {"source_max", FieldType::kInt, int64_t{200}, "maximum source length (0 = no limit)", 0, 1e12},
          {"target_min", FieldType::kInt, int64_t{1}, "minimum target length", 0, 1e12},
          {"target_max", FieldType::kInt, int64_t{200}, "maximum target length (0 = no limit)", 0, 1e12},
          {"max_ratio", FieldType::kNumber, 3.0, "maximum (longer + slack) / (shorter + slack); 0 = off", 0, 1e6},
          {"ratio_slack", FieldType::kNumber, 4.0, "added to both lengths so short pairs are not judged by ratio alone",
           0, 1e6},
          {"max_word_chars", FieldType::kInt, int64_t{60}, "longest word allowed, in code points (0 = off)", 0, 1e9},
      }};
  return k;
}

Result<std::unique_ptr<Stage>> make_length(const StageContext& ctx) {
  const Params& p = ctx.spec->params;
  LengthOptions o;
  const std::string& u = p.text("unit");
  o.unit = u == "chars" ? LengthUnit::kChars : u == "bytes" ? LengthUnit::kBytes : LengthUnit::kWords;
  o.min[0] = p.integer("source_min");
  o.max[0] = p.integer("source_max");
  o.min[1] = p.integer("target_min");
  o.max[1] = p.integer("target_max");
  for (int s = 0; s < 2; ++s)
    if (o.max[s] > 0 && o.min[s] > o.max[s])
      return Error(
          ErrorKind::kPipeline,
          std::string("stage \"") + ctx.spec->name + "\": " + side_name(s) + "_min is above " + side_name(s) + "_max",
          p.where(s ? "target_min" : "source_min").empty() ? ctx.spec->where
                                                           : p.where(s ? "target_min" : "source_min"));
  o.max_ratio = p.number("max_ratio");
  o.ratio_slack = p.number("ratio_slack");
  o.max_word_chars = p.integer("max_word_chars");
  return std::unique_ptr<Stage>(std::make_unique<LengthStage>(ctx, o));
}

}  // namespace sheaf
