#include "stages/dedup.h"

#include <unicode/uchar.h>
#include <unicode/utf8.h>
#include <xxhash.h>

#include "core/utf8.h"
#include "stages/dedup_table.h"

namespace sheaf {

std::string loose_key(std::string_view text) {
  std::string out;
  out.reserve(text.size());
  Utf8Cursor u(text);
  while (!u.done()) {
    if (u.byte() < 0x80) {
      UChar32 c = u.take();
      // In ASCII only letters survive: the rest is digits, punctuation,
      // symbols, spaces or controls.
      if (c >= 'a' && c <= 'z') out += static_cast<char>(c);
      else if (c >= 'A' && c <= 'Z') out += static_cast<char>(c + 32);
      continue;
    }
    UChar32 c = u.next();
    if (c < 0) continue;
    uint32_t mask = U_GET_GC_MASK(c);
    if (mask & (U_GC_P_MASK | U_GC_S_MASK | U_GC_ND_MASK | U_GC_Z_MASK | U_GC_C_MASK)) continue;
    c = u_tolower(c);
    char buf[4];
    int32_t k = 0;
    U8_APPEND_UNSAFE(buf, k, c);
    out.append(buf, static_cast<size_t>(k));
  }
  return out;
}

namespace {

template <int kWords>
class DedupStage : public Stage {
 public:
  DedupStage(const StageContext& ctx, DedupScope scope, bool loose)
      : index_(ctx.index), pipeline_(ctx.pipeline), scope_(scope), loose_(loose) {}

  void map(PairBatch& batch) override {
    std::string a, b;
    for (Pair& p : batch.pairs) {
      if (!p.kept()) continue;
      std::string_view s = p.text[0], t = p.text[1];
      if (loose_) {
        a = loose_key(s);
        b = loose_key(t);
        s = a;
        t = b;
      }
      std::string_view one = scope_ == DedupScope::kTarget ? t : s;
      if (kWords == 1) {
        uint64_t h = XXH3_64bits(one.data(), one.size());
        if (scope_ == DedupScope::kPair) h = XXH3_64bits_withSeed(t.data(), t.size(), h ^ (s.size() * 0x9E3779B97F4A7C15ULL));
        p.key[0] = h;
      } else {
        XXH128_hash_t h = XXH3_128bits(one.data(), one.size());
        if (scope_ == DedupScope::kPair)
          h = XXH3_128bits_withSeed(t.data(), t.size(), h.low64 ^ h.high64 ^ (s.size() * 0x9E3779B97F4A7C15ULL));
        p.key[0] = h.low64;
        p.key[1] = h.high64;
      }
    }
  }

  bool has_reduce() const override { return true; }
  void reduce(PairBatch& batch) override {
    for (Pair& p : batch.pairs) {
      if (!p.kept()) continue;
      // The table keeps the corpus in the line's top 16 bits.
      if (uint64_t first = table_.insert(p.key.data(), (uint64_t{p.corpus} << 48) | (p.line & kLineMask)))
        batch.drop(p, index_, repeat_reason(static_cast<uint32_t>(first >> 48), first & kLineMask));
    }
  }

  std::vector<std::pair<std::string, uint64_t>> counters() const override {
    return {{"distinct_keys", table_.size()}, {"table_bytes", table_.memory_bytes()}};
  }

  int first_of_key_words() const override { return kWords; }
  std::string repeat_reason(uint32_t corpus, uint64_t line) const override {
    return "duplicate:" + pipeline_->origin(corpus, line);
  }
  std::vector<std::pair<std::string, uint64_t>> counters_after(uint64_t distinct) const override {
    return {{"distinct_keys", distinct}, {"table_bytes", DedupTable<kWords>::memory_bytes_after(distinct)}};
  }

 private:
  static constexpr uint64_t kLineMask = (uint64_t{1} << 48) - 1;
  int index_;
  const Pipeline* pipeline_;
  DedupScope scope_;
  bool loose_;
  DedupTable<kWords> table_;
};

}  // namespace

const StageKind& dedup_kind() {
  static const StageKind k{
      "dedup",
      "drops repeated pairs, keeping the first occurrence in input order",
      StageRole::kFilter,
      {
          {"scope", FieldType::kChoice, std::string("pair"), "what must repeat: the pair, the source or the target", 0, 0,
           {"pair", "source", "target"}},
          {"key", FieldType::kChoice, std::string("exact"),
           "exact text, or loose: lowercase, no punctuation, symbols, digits or spaces", 0, 0, {"exact", "loose"}},
          {"hash_bits", FieldType::kInt, int64_t{64}, "XXH3 hash width: 64 or 128 (see the collision bound in the docs)",
           64, 128},
      },
      {},
      {},
      /*varies_per_corpus=*/false};
  return k;
}

Result<std::unique_ptr<Stage>> make_dedup(const StageContext& ctx) {
  const Params& p = ctx.spec->params;
  const std::string& s = p.text("scope");
  DedupScope scope = s == "source" ? DedupScope::kSource : s == "target" ? DedupScope::kTarget : DedupScope::kPair;
  bool loose = p.text("key") == "loose";
  int64_t bits = p.integer("hash_bits");
  if (bits != 64 && bits != 128)
    return Error(ErrorKind::kPipeline, "stage \"" + ctx.spec->name + "\": hash_bits must be 64 or 128",
                 p.where("hash_bits"));
  if (bits == 64) return std::unique_ptr<Stage>(std::make_unique<DedupStage<1>>(ctx, scope, loose));
  return std::unique_ptr<Stage>(std::make_unique<DedupStage<2>>(ctx, scope, loose));
}

}  // namespace sheaf
