// Encoder and decoder for a Vocabulary.
//
// encode() first cuts text at the vocabulary's user-defined tokens (each
// becomes its id, never split), then cuts the rest into word units (units.h), turns each character into its
// alphabet token or, if it is not in the alphabet, into its UTF-8 byte tokens
// (or the unknown token when unknown_as_bytes is off), then applies merges in
// learned order, lowest rank first, within each unit. Encoded units are
// cached in one table shared by the threads. decode() concatenates the bytes of the tokens, skipping special
// tokens but the unknown one (kUnknownText), so decode(encode(x)) == x for every valid UTF-8 x when
// unknown_as_bytes is on.
// An Encoder may use only the first `max_merges` merges: a BPE vocabulary of
// k merges is the first k merges of a larger one, which is how one learning
// run serves a whole size sweep.
// BPE-dropout (Provilkov, Emelianenko & Voita 2020, "BPE-Dropout: Simple and
// Effective Subword Regularization"): encode_dropout() leaves out each
// applicable merge occurrence with probability p at every merge step and
// stops a unit when none is left; p = 0 is encode(), p = 1 applies no merge.
// The draws come from std::mt19937_64 seeded with `seed`, so the same text,
// p and seed give the same ids on any thread; it bypasses the cache.
// Thread-safe: encode() may run on many threads at once.
#pragma once

#include <oneapi/tbb/enumerable_thread_specific.h>

#include <atomic>
#include <cstring>
#include <mutex>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "core/huge_pages.h"
#include "subword/merge_ranks.h"
#include "subword/vocabulary.h"

namespace sheaf {

struct EncodeStats {
  uint64_t tokens = 0;
  uint64_t byte_tokens = 0;  // tokens that are bytes of a character outside the alphabet
  uint64_t unknown = 0;
};

class Encoder {
 public:
  // `text_bytes`: about how much text it will encode (0 = unknown), which
  // sizes the cache of encoded units.
  explicit Encoder(const Vocabulary& v, size_t max_merges = SIZE_MAX, uint64_t text_bytes = 0);

  void encode(std::string_view text, std::vector<uint32_t>& out, EncodeStats* stats = nullptr) const;
  std::vector<uint32_t> encode(std::string_view text) const {
    std::vector<uint32_t> out;
    encode(text, out);
    return out;
  }
  void encode_dropout(std::string_view text, double p, uint64_t seed, std::vector<uint32_t>& out) const;
  // Keeps `ids` as the encoding of `unit` (which they must be, e.g. from the
  // learner: trainer.h's LearnedUnits), so encode() finds it. Thread-safe.
  void remember(std::string_view unit, std::span<const uint32_t> ids) const;
  const Vocabulary& vocabulary() const { return v_; }
  // Size of the vocabulary this encoder uses (specials, bytes, alphabet and
  // the merges it applies).
  size_t effective_size() const { return v_.first_merge() + merges_; }

 private:
  // Encoded units, shared by all threads: a flat table keyed by the unit's
  // XXH3-64, half a cache line a unit with its bytes and ids inside, so that
  // a hit costs one memory access (prefetched by encode()). Insert-only and
  // lock-free: a thread claims an empty slot, fills it and then publishes
  // its hash; readers look only at published slots, so a unit being written
  // is a miss, never a wrong answer. A unit is kept if its bytes and ids
  // (16 bits each for a vocabulary of at most 65,536 tokens, else 32) fit in
  // 22 bytes; once 3/4 full, the table adds nothing more. It is allocated on
  // the first add.
  class UnitCache {
   public:
    UnitCache(size_t slots, bool narrow_ids) : slots_(slots), id_bytes_(narrow_ids ? 2 : 4) {}
    // Appends the ids of `unit` to `out`; false if it is not kept.
    bool find(std::string_view unit, uint64_t hash, std::vector<uint32_t>& out) const;
    // `unflushed`: the calling thread's adds not yet in the shared count.
    void add(std::string_view unit, uint64_t hash, const uint32_t* ids, uint32_t n, uint32_t& unflushed);
    void prefetch(uint64_t hash) const;

   private:
    static constexpr uint64_t kEmpty = 0, kWriting = 1;  // units of these hashes are never kept
    static constexpr size_t kData = 22;
    // A unit is kept within kProbes slots of its home slot (so a lookup
    // ends there, full table or not); counts are shared every kFlush adds.
    static constexpr size_t kProbes = 64;
    static constexpr uint32_t kFlush = 256;
    struct alignas(32) Slot {
      std::atomic<uint64_t> hash;
      uint8_t bytes_len, ids_len;
      char data[kData];  // the unit's bytes, then its ids
    };
    // A published slot's bytes are `unit`'s.
    static bool holds(const Slot& s, std::string_view unit) {
      return s.bytes_len == unit.size() && std::memcmp(s.data, unit.data(), unit.size()) == 0;
    }
    size_t slots_;
    uint32_t id_bytes_;
    std::once_flag allocated_;
    HugeVector<Slot> store_;
    std::atomic<const Slot*> table_{nullptr};
    std::atomic<size_t> size_{0};
  };
  struct Scratch {
    std::vector<uint32_t> ends, symbols, ranks;
    std::vector<uint64_t> hashes;
    std::vector<uint8_t> merged;
    uint32_t unflushed = 0;  // this thread's cache adds not yet counted
  };
  void encode_unit(std::string_view unit, Scratch& s) const;
  // Text without user-defined tokens.
  void encode_plain(std::string_view text, std::vector<uint32_t>& out, EncodeStats* stats) const;
  void encode_dropout_plain(std::string_view text, double p, uint64_t seed, std::vector<uint32_t>& out) const;
  const Vocabulary& v_;
  size_t merges_;
  MergeRanks rank_;
  mutable UnitCache cache_;
  mutable tbb::enumerable_thread_specific<Scratch> scratch_;
};

// The text the unknown token decodes to: U+FFFD REPLACEMENT CHARACTER, the
// Unicode Standard's mark for a character that could not be represented
// (text was there and is lost), rather than nothing.
inline constexpr const char* kUnknownText = "\xEF\xBF\xBD";
std::string decode(const Vocabulary& v, const std::vector<uint32_t>& ids);

}  // namespace sheaf
