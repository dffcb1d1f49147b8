// Runs one stage, built from a TOML snippet, over a list of pairs.
#pragma once

#include <gtest/gtest.h>

#include <memory>
#include <string>
#include <vector>

#include "pipeline/pipeline.h"
#include "stages/stage.h"

namespace sheaf::test {

struct StageRun {
  std::vector<std::string> reasons;  // "" for kept pairs
  std::vector<std::pair<std::string, std::string>> text;
};

class StageHarness {
 public:
  // `stage_toml` is the body of one [[stage]] table; earlier stages may be
  // given in `before` (their rewrites feed StageContext::canonical).
  explicit StageHarness(const std::string& stage_toml, const std::string& source_lang = "en",
                        const std::string& target_lang = "es", const std::string& before = "") {
    std::string text = "sheaf = 1\n[corpus]\nfiles = [\"x\"]\nsource_lang = \"" + source_lang +
                       "\"\ntarget_lang = \"" + target_lang + "\"\n" + before + "[[stage]]\n" + stage_toml + "\n";
    auto p = load_pipeline_text(text, "test.toml");
    if (!p.ok()) {
      error_ = p.error().describe();
      return;
    }
    pipeline_ = std::make_unique<Pipeline>(std::move(p.value()));
    for (size_t i = 0; i < pipeline_->stages.size(); ++i) {
      StageContext ctx;
      ctx.pipeline = pipeline_.get();
      ctx.spec = &pipeline_->stages[i];
      ctx.index = static_cast<int>(i);
      ctx.canonical = [this](std::string& t, int side) {
        for (const auto& s : stages_)
          if (!s->rewrite(t, side)) return false;
        return true;
      };
      auto s = make_stage(ctx);
      if (!s.ok()) {
        error_ = s.error().describe();
        return;
      }
      stages_.push_back(std::move(s.value()));
    }
  }

  bool ok() const { return error_.empty(); }
  const std::string& error() const { return error_; }
  Stage& stage() { return *stages_.back(); }

  StageRun run(const std::vector<std::pair<std::string, std::string>>& pairs) {
    PairBatch b;
    for (const auto& [s, t] : pairs) b.raw += s + t;
    size_t off = 0;
    uint64_t line = 1;
    for (const auto& [s, t] : pairs) {
      Pair p;
      p.line = line++;
      p.text[0] = std::string_view(b.raw).substr(off, s.size());
      p.text[1] = std::string_view(b.raw).substr(off + s.size(), t.size());
      off += s.size() + t.size();
      b.pairs.push_back(p);
    }
    for (const auto& st : stages_) {
      st->map(b);
      if (st->has_reduce()) st->reduce(b);
    }
    StageRun r;
    for (const Pair& p : b.pairs) {
      r.reasons.push_back(p.kept() ? "" : p.reason);
      r.text.emplace_back(std::string(p.text[0]), std::string(p.text[1]));
    }
    return r;
  }

  // The reason for one pair, "" if kept.
  std::string reason(const std::string& s, const std::string& t) { return run({{s, t}}).reasons[0]; }

 private:
  std::unique_ptr<Pipeline> pipeline_;
  std::vector<std::unique_ptr<Stage>> stages_;
  std::string error_;
};

}  // namespace sheaf::test
