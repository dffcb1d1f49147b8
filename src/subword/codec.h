// Encoder and decoder for a Vocabulary.
//
// encode() cuts text into word units (units.h), turns each character into its
// alphabet token or, if it is not in the alphabet, into its UTF-8 byte tokens
// (or the unknown token when byte fallback is off), then applies merges in
// learned order, lowest rank first, within each unit. Encoded units are
// cached. decode() concatenates the bytes of the tokens, skipping special
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
#include <unordered_map>
#include <vector>

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
  void encode_unit(std::string_view unit, std::vector<uint32_t>& out) const;
  const Vocabulary& v_;
  size_t merges_;
  std::unordered_map<uint64_t, std::pair<uint32_t, uint32_t>> rank_;  // pair -> (rank, result)
  struct ViewHash {
    using is_transparent = void;
    size_t operator()(std::string_view s) const { return std::hash<std::string_view>{}(s); }
  };
  using Cache = std::unordered_map<std::string, std::vector<uint32_t>, ViewHash, std::equal_to<>>;
  mutable tbb::enumerable_thread_specific<Cache> cache_;
};

std::string decode(const Vocabulary& v, const std::vector<uint32_t>& ids);

}  // namespace sheaf
