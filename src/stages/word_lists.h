// word_lists: spelling dictionaries (Hunspell, Debian's hunspell-LANG
// packages) as a word-level second opinion for the language stage.
//
// CLD2 reads character n-grams; on a short line of a closely related
// language (Portuguese in a Spanish corpus) they say little, while the words
// say much: "arquivo", "não", "nome" are Portuguese words and not Spanish
// ones. A dictionary answers "is this a word of language X" for every
// inflected form its affix rules allow.
//
// Dictionaries are found by language code in a directory (Debian installs
// them in /usr/share/hunspell as LL_CC.aff/.dic), loaded once per process
// (by load_word_lists, or when first consulted) and shared by all threads. A language without an installed
// dictionary has none, and callers fall back to what they did without.
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

namespace sheaf {

class SpellingDictionary;  // one loaded dictionary (opaque)

// The dictionary for `code` (a BCP 47 tag or CLD2 code: "pt-BR", "pt", "es")
// in `dir`, or nullptr when none is installed. Chosen among the files
// DIR/NAME.dic (with NAME.aff beside): the code itself with '_' ("pt_BR"),
// then its primary subtag ("fr"), then the primary subtag with the same
// letters as region ("es_ES", "pt_PT", "it_IT"), then the first in name
// order ("cs_CZ"). Thread-safe; the result lives until the process ends.
const SpellingDictionary* find_word_list(const std::string& dir, std::string_view code);

// The file name (without .dic) of a found dictionary, for messages and tests.
const std::string& word_list_name(const SpellingDictionary* list);

// Loads those of `lists` that are not loaded and that no other thread is
// loading or asking. Threads that start on the same set call it first, so
// that they load its dictionaries side by side instead of each waiting for
// the one loading the dictionary it asked about first (7 dictionaries for
// Spanish: about 0.6 s of one core).
void load_word_lists(const std::vector<const SpellingDictionary*>& lists);

// True when `list` accepts `word` (UTF-8; a word's capitalisation as in
// running text is accepted as the dictionary allows). Thread-safe: a mutex
// per dictionary (Hunspell objects are not safe to share), so callers
// should remember answers (WordCache).
bool word_list_accepts(const SpellingDictionary* list, std::string_view word);

// The words of `text` a dictionary can judge: runs of letters (and marks)
// with apostrophes inside ("l'emplacement"), of at least two letters, at
// most `most` of them, in order.
std::vector<std::string_view> dictionary_words(std::string_view text, size_t most);

// A set of dictionaries (at most 32, list i is bit i) with a per-thread
// memory of their answers per word type, so the dictionaries' locks and
// their slow lookups (1-30 us a word) are met once per word type and thread.
// Four-way set-associative on a 64-bit hash of the word: an evicted word is
// asked again, so the answers never depend on what the table holds.
// 2^18 slots (4 MiB a thread): on text whose words no dictionary holds (20 MB
// of the generated benchmark corpus) the pass took 10.8 user seconds against
// 15.0 with 2^16 and 11.0 with 2^20 (docs/performance.md).
class WordCache {
 public:
  explicit WordCache(size_t slots = size_t{1} << 18);  // a power of two, at least 4
  // The bits of the lists among `want` that accept `word`. `lists` and
  // `seed` name the set (a cache serves one set at a time: a new seed
  // empties it).
  uint32_t accepted(const std::vector<const SpellingDictionary*>& lists, uint64_t seed, std::string_view word, uint32_t want);

 private:
  struct Slot {
    uint64_t key = 0;
    uint32_t known = 0, yes = 0;
  };
  std::vector<Slot> slots_;
  uint64_t seed_ = 0;
};

}  // namespace sheaf
