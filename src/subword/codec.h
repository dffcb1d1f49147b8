// Encoder and decoder for a Vocabulary.
//
// encode() cuts text into word units (units.h), turns each character into its
// alphabet token or, if it is not in the alphabet, into its UTF-8 byte tokens
// (or the unknown token when byte fallback is off), then applies merges in
// learned order, lowest rank first, within each unit. Encoded units are
// cached per thread. decode() concatenates the bytes of the tokens, skipping special
// tokens, so decode(encode(x)) == x for every valid UTF-8 x when byte
// fallback is on.
// An Encoder may use only the first `max_merges` merges: a BPE vocabulary of
// k merges is the first k merges of a larger one, which is how one learning
// run serves a whole size sweep.
// Thread-safe: the cache is per thread.
#pragma once

#include <oneapi/tbb/enumerable_thread_specific.h>

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
  explicit Encoder(const Vocabulary& v, size_t max_merges = SIZE_MAX);

  void encode(std::string_view text, std::vector<uint32_t>& out, EncodeStats* stats = nullptr) const;
  std::vector<uint32_t> encode(std::string_view text) const {
    std::vector<uint32_t> out;
    encode(text, out);
    return out;
  }
  const Vocabulary& vocabulary() const { return v_; }
  // Size of the vocabulary this encoder uses (specials, bytes, alphabet and
  // the merges it applies).
  size_t effective_size() const { return v_.first_merge() + merges_; }

 private:
  // Encoded units of one thread: a flat table keyed by the unit's XXH3-64,
  // one cache line a unit with its bytes and ids inside, so that a hit costs
  // one memory access (prefetched by encode()). Units longer than 22 bytes
  // or of more than 8 ids are not kept; once full, it adds nothing more.
  class UnitCache {
   public:
    // The ids of `unit`, or nullptr.
    const uint32_t* find(std::string_view unit, uint64_t hash, uint32_t& n) const;
    void add(std::string_view unit, uint64_t hash, const uint32_t* ids, uint32_t n);
    void prefetch(uint64_t hash) const;

   private:
    struct alignas(64) Slot {
      uint64_t hash;  // 0: empty (a unit whose hash is 0 is never kept)
      uint8_t bytes_len, ids_len;
      char bytes[22];
      uint32_t ids[8];
    };
    HugeVector<Slot> slots_;
    size_t size_ = 0;
  };
  struct Scratch {
    UnitCache cache;
    std::vector<uint32_t> ends, symbols, ranks;
    std::vector<uint64_t> hashes;
    std::vector<uint8_t> merged;
  };
  void encode_unit(std::string_view unit, Scratch& s) const;
  const Vocabulary& v_;
  size_t merges_;
  MergeRanks rank_;
  mutable tbb::enumerable_thread_specific<Scratch> scratch_;
};

std::string decode(const Vocabulary& v, const std::vector<uint32_t>& ids);

}  // namespace sheaf
