#include "stages/copy.h"

#include <unicode/uchar.h>
#include <unicode/utf8.h>

#include <algorithm>
#include <vector>

namespace sheaf {

namespace {

std::vector<uint64_t> trigrams(std::string_view s) {
  std::vector<UChar32> cps;
  const uint8_t* p = reinterpret_cast<const uint8_t*>(s.data());
  int32_t n = static_cast<int32_t>(s.size()), i = 0;
  while (i < n) {
    UChar32 c;
    U8_NEXT(p, i, n, c);
    cps.push_back(c < 0 ? 0xFFFD : u_tolower(c));
  }
  std::vector<uint64_t> g;
  for (size_t k = 0; k + 3 <= cps.size(); ++k)
    g.push_back((static_cast<uint64_t>(cps[k]) << 42) | (static_cast<uint64_t>(cps[k + 1]) << 21) |
                static_cast<uint64_t>(cps[k + 2]));
  std::sort(g.begin(), g.end());
  return g;
}

}  // namespace

double trigram_overlap(std::string_view a, std::string_view b) {
  std::vector<uint64_t> x = trigrams(a), y = trigrams(b);
  if (x.empty() || y.empty()) return a == b ? 1.0 : 0.0;
  size_t common = 0, i = 0, j = 0;
  while (i < x.size() && j < y.size()) {
    if (x[i] == y[j]) {
      ++common;
      ++i;
      ++j;
    } else if (x[i] < y[j]) {
      ++i;
    } else {
      ++j;
    }
  }
  return 2.0 * static_cast<double>(common) / static_cast<double>(x.size() + y.size());
}

namespace {

class CopyStage : public Stage {
 public:
  CopyStage(const StageContext& ctx, double max_overlap) : index_(ctx.index), max_overlap_(max_overlap) {}
  void map(PairBatch& batch) override {
    for (Pair& p : batch.pairs) {
      if (!p.kept()) continue;
      if (p.text[0] == p.text[1]) {
        batch.drop(p, index_, "copy:identical");
      } else if (max_overlap_ < 1.0 && trigram_overlap(p.text[0], p.text[1]) > max_overlap_) {
        batch.drop(p, index_, "copy:overlap");
      }
    }
  }

 private:
  int index_;
  double max_overlap_;
};

}  // namespace

const StageKind& copy_kind() {
  static const StageKind k{
      "copy",
      "drops untranslated pairs (target copied from source)",
      StageRole::kFilter,
      {
          {"max_overlap", FieldType::kNumber, 0.8,
           "drop when the sides' character-trigram overlap (Dice) is above this; 1 = identical only", 0, 1},
      }};
  return k;
}

Result<std::unique_ptr<Stage>> make_copy(const StageContext& ctx) {
  return std::unique_ptr<Stage>(std::make_unique<CopyStage>(ctx, ctx.spec->params.number("max_overlap")));
}

}  // namespace sheaf
