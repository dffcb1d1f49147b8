// Vocabulary: the tokens of one learned subword vocabulary and its file.
//
// Ids, in order: the four special tokens (padding, unknown, begin and end of
// sequence, in the order their ids give), the 256 byte tokens (id = first
// byte id + byte value), the base alphabet (one token per character, most
// frequent first), then one token per merge in rank order, then the
// user-defined tokens (language or domain tags: text the encoder never
// splits), in the order given. The file format
// is specified in docs/vocabulary-format.md; load() checks its checksum and
// every field, so a damaged or hand-edited file is reported, never used.
#pragma once

#include <array>
#include <cstdint>
#include <string>
#include <string_view>
#include <unordered_map>
#include <vector>

#include <unicode/umachine.h>

#include "core/error.h"

namespace sheaf {

// Format 2 is format 1 plus user-defined tokens; a vocabulary without them
// is written as format 1 (byte for byte as before).
inline constexpr int kVocabularyFormat = 2;

enum class TokenKind { kSpecial, kByte, kChar, kMerged, kUser };
const char* token_kind_name(TokenKind k);

struct Token {
  TokenKind kind;
  std::string bytes;  // the text it stands for (specials: their spelling)
  uint32_t left = 0, right = 0;  // kMerged: the two tokens it joins
};

enum Special : int { kPad = 0, kUnk = 1, kBos = 2, kEos = 3 };

struct VocabularyInfo {
  std::string side;          // "shared", "source" or "target"
  double alphabet_coverage = 0;
  bool single_digits = false;
  bool unknown_as_bytes = true;
};

class Vocabulary {
 public:
  Vocabulary() = default;

  // Builds a vocabulary from its parts; specials[i] is the spelling and
  // special_ids[i] the id of pad, unk, bos, eos (a permutation of 0..3).
  static Vocabulary build(const std::array<std::string, 4>& specials, const std::array<uint32_t, 4>& special_ids,
                          const std::vector<std::string>& alphabet, VocabularyInfo info);
  // Appends a merge of two existing tokens; returns the new id. Not after
  // add_user().
  uint32_t add_merge(uint32_t left, uint32_t right);
  // Appends a user-defined token (non-empty, not already one); returns its id.
  uint32_t add_user(std::string text);

  static Result<Vocabulary> load(const std::string& path);
  static Result<Vocabulary> parse(std::string_view text, const std::string& name);
  std::string serialize() const;

  size_t size() const { return tokens_.size(); }
  const Token& token(uint32_t id) const { return tokens_[id]; }
  uint32_t special(Special s) const { return special_ids_[s]; }
  uint32_t byte_token(uint8_t b) const { return kFirstByte + b; }
  bool is_byte(uint32_t id) const { return id >= kFirstByte && id < kFirstByte + 256; }
  uint32_t first_char() const { return kFirstByte + 256; }
  uint32_t first_merge() const { return first_char() + static_cast<uint32_t>(alphabet_size_); }
  size_t alphabet_size() const { return alphabet_size_; }
  size_t merges() const { return tokens_.size() - first_merge() - users_.size(); }
  // User-defined tokens: their text and id, in id order.
  const std::vector<std::pair<std::string, uint32_t>>& user_tokens() const { return users_; }
  // Id of the user-defined token spelled `text`, or -1.
  int64_t user_id(std::string_view text) const;
  // Token id of a character of the alphabet (its UTF-8), or -1.
  int64_t char_id(std::string_view utf8) const;
  // Appends the symbols a text starts from before merges: each character's
  // token, or for a character outside the alphabet its byte tokens (the
  // unknown token when unknown_as_bytes is off).
  void initial_symbols(std::string_view text, std::vector<uint32_t>& out) const;
  const VocabularyInfo& info() const { return info_; }
  // XXH3-64 of the serialized file without its checksum line: shards record
  // it so that they are never read with another vocabulary.
  uint64_t checksum() const;

  static constexpr uint32_t kFirstByte = 4;

 private:
  std::vector<Token> tokens_;
  std::array<uint32_t, 4> special_ids_{0, 1, 2, 3};
  size_t alphabet_size_ = 0;
  std::vector<std::pair<std::string, uint32_t>> users_;
  // Token ids of the alphabet's characters: a flat table for the BMP (the
  // encoder looks up every character), a map above it.
  static constexpr uint32_t kNoChar = UINT32_MAX;
  std::vector<uint32_t> bmp_ids_;
  std::unordered_map<UChar32, uint32_t> astral_ids_;
  int64_t id_of(UChar32 c) const {
    if (c < 0) return -1;
    if (c < 0x10000) {
      uint32_t id = bmp_ids_.empty() ? kNoChar : bmp_ids_[static_cast<size_t>(c)];
      return id == kNoChar ? int64_t{-1} : int64_t{id};
    }
    auto it = astral_ids_.find(c);
    return it == astral_ids_.end() ? -1 : static_cast<int64_t>(it->second);
  }
  VocabularyInfo info_;
};

// The escaped form of token bytes in the file and in `encode --tokens`:
// printable characters as they are; "\\" for a backslash, "\s" for a space,
// "\t", "\n", "\r"; "\u{HHHH}" for other invisible characters (controls,
// format characters, separators, unassigned); "\xHH" for bytes that are not
// valid UTF-8.
std::string escape_token(std::string_view bytes);
Result<std::string> unescape_token(std::string_view text);

}  // namespace sheaf
