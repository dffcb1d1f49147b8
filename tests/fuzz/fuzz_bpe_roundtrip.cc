// BPE encode then decode on arbitrary bytes gives the bytes back (byte
// fallback makes every input encodable, valid UTF-8 or not).
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <string>

#include "fuzz_util.h"
#include "subword/codec.h"
#include "subword/trainer.h"

namespace {

const sheaf::Vocabulary& vocabulary() {
  static const sheaf::Vocabulary v = [] {
    std::string path = "/tmp/sheaf-fuzz-train-" + std::to_string(::getpid()) + ".tsv";
    {
      std::ofstream out(path);
      for (int i = 0; i < 40; ++i)
        out << "The garden opens at nine " << i << ".\tEl jard\u00edn abre a las nueve.\n"
            << "Seeds are lent to gardeners.\t\u0421\u0435\u043c\u0435\u043d\u0430 \u4e2d\u6587\n";
    }
    sheaf::TrainOptions o;
    o.size = 420;
    o.specials = {"<p>", "<u>", "<b>", "<e>"};
    o.side = "shared";
    auto r = sheaf::train_vocabulary({path}, {0, 1}, o, nullptr);
    std::remove(path.c_str());
    if (!r.ok()) std::abort();
    return std::move(r.value());
  }();
  return v;
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  static const sheaf::Encoder enc(vocabulary());
  std::string text(reinterpret_cast<const char*>(data), size);
  auto ids = enc.encode(text);
  for (uint32_t id : ids) SHEAF_FUZZ_CHECK(id < vocabulary().size());
  SHEAF_FUZZ_CHECK(sheaf::decode(vocabulary(), ids) == text);
  return 0;
}
