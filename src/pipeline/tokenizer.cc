#include "pipeline/tokenizer.h"

#include <algorithm>

#include <filesystem>

#include "run/step.h"

namespace sheaf {

Result<std::unique_ptr<Tokenizer>> Tokenizer::from_run(const std::string& run_dir, int side, uint64_t text_bytes) {
  std::error_code ec;
  std::string vocab = run_dir + "/vocab.shared.txt";
  if (!std::filesystem::is_regular_file(vocab, ec))
    vocab = run_dir + (side == 0 ? "/vocab.source.txt" : "/vocab.target.txt");
  std::string pipeline = run_dir + "/" + kRunPipelineFile;
  if (!std::filesystem::is_regular_file(pipeline, ec) || !std::filesystem::is_regular_file(vocab, ec))
    return Error(ErrorKind::kInput,
                 std::string("not a run directory with a vocabulary: it needs ") + kRunPipelineFile +
                     " and a vocab.*.txt file (written by a run that reached its vocabulary stage)",
                 Location{run_dir, 0, 0, {}});
  return make(vocab, load_pipeline(pipeline), side, text_bytes);
}

Result<std::unique_ptr<Tokenizer>> Tokenizer::from_files(const std::string& vocab_file,
                                                         const std::string& pipeline_file, int side,
                                                         uint64_t text_bytes) {
  return make(vocab_file, load_pipeline(pipeline_file), side, text_bytes);
}

Result<std::unique_ptr<Tokenizer>> Tokenizer::make(const std::string& vocab_file, Result<Pipeline> pipeline, int side,
                                                   uint64_t text_bytes) {
  if (!pipeline.ok()) return pipeline.error();
  auto v = Vocabulary::load(vocab_file);
  if (!v.ok()) return v.error();
  std::unique_ptr<Tokenizer> t(new Tokenizer());
  t->pipeline_ = std::move(pipeline.value());
  t->vocab_ = std::move(v.value());
  t->vocab_path_ = vocab_file;
  t->side_ = side;
  // The rules' stages point at the pipeline: built once it has its place.
  auto rules = TextRules::build(t->pipeline_);
  if (!rules.ok()) return rules.error();
  t->rules_ = std::move(rules.value());
  for (const auto& s : t->pipeline_.stages) {
    const auto& made = s.kind->provides;
    if (std::find(made.begin(), made.end(), kShardsProduct) == made.end()) continue;
    t->bos_ = s.params.flag("bos");
    t->eos_ = s.params.flag("eos");
    t->tag_ = t->vocab_.user_id(s.params.text(side == 0 ? "source_tag" : "target_tag"));
  }
  t->encoder_ = std::make_unique<Encoder>(t->vocab_, SIZE_MAX, text_bytes > 0 ? text_bytes : uint64_t{1} << 22);
  return t;
}

std::string Tokenizer::rewrite(std::string_view text) const {
  std::string s(text);
  rules_.apply(s, side_);
  return s;
}

void Tokenizer::encode(std::string_view text, bool bos, bool eos, int64_t tag, std::vector<uint32_t>& out,
                       double dropout, uint64_t seed) const {
  thread_local std::string s;  // keeps its capacity from text to text
  s.assign(text);
  rules_.apply(s, side_);
  if (bos) out.push_back(vocab_.special(kBos));
  if (tag >= 0) out.push_back(static_cast<uint32_t>(tag));
  if (dropout > 0)
    encoder_->encode_dropout(s, dropout, seed, out);
  else
    encoder_->encode(s, out);
  if (eos) out.push_back(vocab_.special(kEos));
}

std::string Tokenizer::decode(const uint32_t* ids, size_t n, bool stop_at_eos, bool skip_special) const {
  std::string out;
  uint32_t eos = vocab_.special(kEos);
  for (size_t i = 0; i < n; ++i) {
    uint32_t id = ids[i];
    if (stop_at_eos && id == eos) break;
    if (id >= vocab_.size()) continue;
    const Token& t = vocab_.token(id);
    if (skip_special && id == vocab_.special(kUnk)) {
      out += kUnknownText;  // text was there: shown as U+FFFD, not dropped
      continue;
    }
    if (t.kind == TokenKind::kSpecial && skip_special) continue;
    out += t.bytes;
  }
  return out;
}

}  // namespace sheaf
