#include "stages/word_lists.h"

#include <unicode/uchar.h>
#include <unicode/ucnv.h>
#include <unicode/ustring.h>
#include <unicode/utf8.h>
#include <xxhash.h>

#include <algorithm>
#include <atomic>
#include <cctype>
#include <filesystem>
#include <hunspell/hunspell.hxx>
#include <map>
#include <memory>
#include <mutex>

#include "core/utf8.h"

namespace sheaf {

class SpellingDictionary {
 public:
  // Nothing is read until load_word_lists() or the first word asked about
  // (the language stage loads its set when its first batches arrive).
  SpellingDictionary(std::string name, std::string aff, std::string dic)
      : name_(std::move(name)), aff_(std::move(aff)), dic_(std::move(dic)) {}
  ~SpellingDictionary() {
    if (conv_) ucnv_close(conv_);
  }
  const std::string& name() const { return name_; }

  // Loads the dictionary now unless it is loaded or another thread holds
  // it (loading it, or asking it).
  void try_load() {
    if (ready_.load(std::memory_order_acquire)) return;
    std::unique_lock<std::mutex> lock(mu_, std::try_to_lock);
    if (lock.owns_lock() && !dict_) load();
  }

  bool accepts(std::string_view word) {
    std::lock_guard<std::mutex> lock(mu_);
    if (!dict_) load();
    if (broken_) return false;
    if (!conv_) return dict_->spell(std::string(word));
    // The dictionary's own 8-bit encoding (pl_PL is ISO 8859-2): a word it
    // cannot spell in that encoding is not one of its words.
    UErrorCode st = U_ZERO_ERROR;
    UChar u[128];
    int32_t ulen = 0;
    u_strFromUTF8(u, 128, &ulen, word.data(), static_cast<int32_t>(word.size()), &st);
    if (U_FAILURE(st) || ulen > 128) return false;
    char out[256];
    int32_t n = ucnv_fromUChars(conv_, out, sizeof out, u, ulen, &st);
    if (U_FAILURE(st) || n >= static_cast<int32_t>(sizeof out)) return false;
    return dict_->spell(std::string(out, static_cast<size_t>(n)));
  }

 private:
  void load() {
    // libhunspell 1.7 fills a process-wide case table, without a lock, when
    // the first UTF-8 dictionary is built (and publishes it before it is
    // full). Dictionaries load side by side, so until one UTF-8 dictionary
    // is built, builds take turns.
    static std::mutex first_mu;
    static std::atomic<bool> table_ready{false};
    if (table_ready.load(std::memory_order_acquire)) {
      dict_ = std::make_unique<Hunspell>(aff_.c_str(), dic_.c_str());
    } else {
      std::lock_guard<std::mutex> first(first_mu);
      dict_ = std::make_unique<Hunspell>(aff_.c_str(), dic_.c_str());
      if (is_utf8(dict_->get_dict_encoding())) table_ready.store(true, std::memory_order_release);
    }
    std::string enc = dict_->get_dict_encoding();
    if (!is_utf8(enc)) {
      UErrorCode st = U_ZERO_ERROR;
      conv_ = ucnv_open(enc.c_str(), &st);
      if (U_FAILURE(st)) {
        conv_ = nullptr;
        broken_ = true;  // an encoding ICU does not know: this list says nothing
      } else {
        ucnv_setFromUCallBack(conv_, UCNV_FROM_U_CALLBACK_STOP, nullptr, nullptr, nullptr, &st);
      }
    }
    ready_.store(true, std::memory_order_release);
  }

  static bool is_utf8(std::string enc) {
    for (char& c : enc) c = static_cast<char>(std::toupper(static_cast<unsigned char>(c)));
    return enc == "UTF-8" || enc == "UTF8";
  }

  std::string name_, aff_, dic_;
  std::mutex mu_;
  std::unique_ptr<Hunspell> dict_;
  UConverter* conv_ = nullptr;
  bool broken_ = false;
  std::atomic<bool> ready_{false};  // loaded (set under mu_, read without it)
};

namespace {

std::string file_for(const std::string& dir, std::string_view code) {
  namespace fs = std::filesystem;
  std::string full(code), primary(code.substr(0, code.find_first_of("-_")));
  for (char& c : primary) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  std::replace(full.begin(), full.end(), '-', '_');
  auto have = [&](const std::string& name) {
    std::error_code ec;
    return fs::is_regular_file(dir + "/" + name + ".dic", ec) && fs::is_regular_file(dir + "/" + name + ".aff", ec);
  };
  if (full != primary && have(full)) return full;
  if (have(primary)) return primary;
  std::string same = primary + "_";
  for (char c : primary) same += static_cast<char>(std::toupper(static_cast<unsigned char>(c)));
  if (have(same)) return same;
  std::vector<std::string> names;
  std::error_code ec;
  for (const auto& e : fs::directory_iterator(dir, ec)) {
    std::string f = e.path().filename().string();
    if (f.size() > primary.size() + 5 && f.compare(0, primary.size() + 1, primary + "_") == 0 &&
        f.compare(f.size() - 4, 4, ".dic") == 0) {
      std::string name = f.substr(0, f.size() - 4);
      if (have(name)) names.push_back(name);
    }
  }
  std::sort(names.begin(), names.end());
  return names.empty() ? std::string() : names.front();
}

}  // namespace

const SpellingDictionary* find_word_list(const std::string& dir, std::string_view code) {
  static std::mutex mu;
  // Loaded once and kept until the process ends (any thread may be
  // reading). Never destroyed: freeing a large dictionary's many small
  // allocations at exit took a tenth of a second or more each, for nothing;
  // the table stays reachable, so leak checkers see no leak.
  static auto& lists = *new std::map<std::string, std::unique_ptr<SpellingDictionary>>;  // by file path
  static auto& chosen = *new std::map<std::string, std::string>;               // dir + code -> path ("" none)
  if (dir.empty() || code.empty()) return nullptr;
  std::lock_guard<std::mutex> lock(mu);
  std::string key = dir + "\n" + std::string(code);
  auto c = chosen.find(key);
  if (c == chosen.end()) {
    std::string name = file_for(dir, code);
    c = chosen.emplace(key, name.empty() ? std::string() : dir + "/" + name).first;
    if (!name.empty() && !lists.count(c->second))
      lists.emplace(c->second, std::make_unique<SpellingDictionary>(name, c->second + ".aff", c->second + ".dic"));
  }
  return c->second.empty() ? nullptr : lists.at(c->second).get();
}

const std::string& word_list_name(const SpellingDictionary* list) { return list->name(); }

void load_word_lists(const std::vector<const SpellingDictionary*>& lists) {
  for (const SpellingDictionary* list : lists)
    if (list) const_cast<SpellingDictionary*>(list)->try_load();
}

bool word_list_accepts(const SpellingDictionary* list, std::string_view word) {
  return const_cast<SpellingDictionary*>(list)->accepts(word);
}

std::vector<std::string_view> dictionary_words(std::string_view text, size_t most) {
  std::vector<std::string_view> out;
  Utf8Cursor u(text);
  int32_t start = -1, end = 0;
  size_t letters = 0;
  auto flush = [&] {
    if (start >= 0 && letters >= 2 && out.size() < most)
      out.push_back(text.substr(static_cast<size_t>(start), static_cast<size_t>(end - start)));
    start = -1;
    letters = 0;
  };
  while (!u.done() && out.size() < most) {
    auto at = static_cast<int32_t>(u.pos());
    UChar32 c;
    bool letter;
    if (u.byte() < 0x80) {  // most of the text: no decoding, no property lookup
      c = u.take();
      letter = static_cast<unsigned>((c | 0x20) - 'a') < 26u;
    } else {
      c = u.next();
      letter = c >= 0 && (U_GET_GC_MASK(c) & (U_GC_L_MASK | U_GC_M_MASK));
    }
    bool apostrophe = c == '\'' || c == 0x2019;
    if (letter) {
      if (start < 0) start = at;
      end = static_cast<int32_t>(u.pos());
      letters += c < 0x80 || (U_GET_GC_MASK(c) & U_GC_L_MASK) != 0;
    } else if (apostrophe && start >= 0 && !u.done()) {
      // kept only between letters: "l'emplacement", not a closing quote
      Utf8Cursor ahead = u;
      UChar32 d = ahead.next();
      if (!(d >= 0 && (U_GET_GC_MASK(d) & U_GC_L_MASK))) flush();
    } else {
      flush();
    }
  }
  flush();
  return out;
}

WordCache::WordCache(size_t slots) : slots_(slots) {}

uint32_t WordCache::accepted(const std::vector<const SpellingDictionary*>& lists, uint64_t seed, std::string_view word,
                             uint32_t want) {
  if (seed != seed_) {
    std::fill(slots_.begin(), slots_.end(), Slot{});
    seed_ = seed;
  }
  uint64_t h = XXH3_64bits_withSeed(word.data(), word.size(), seed) | 1;
  // Four ways a set (one cache line): the word found moves to the front, a
  // new word enters at the front and the least recently used leaves, so
  // two frequent words that share a set do not evict each other.
  Slot* set = &slots_[(h & (slots_.size() - 1)) & ~size_t{3}];
  int at = 0;
  while (at < 4 && set[at].key != h) ++at;
  Slot found = at < 4 ? set[at] : Slot{h, 0, 0};
  for (int k = (at < 4 ? at : 3); k > 0; --k) set[k] = set[k - 1];
  set[0] = found;
  Slot& s = set[0];
  uint32_t ask = want & ~s.known;
  for (uint32_t b = ask; b != 0; b &= b - 1) {
    int i = __builtin_ctz(b);
    if (static_cast<size_t>(i) < lists.size() && lists[i] && word_list_accepts(lists[i], word)) s.yes |= 1u << i;
  }
  s.known |= ask;
  return s.yes & want;
}

}  // namespace sheaf
