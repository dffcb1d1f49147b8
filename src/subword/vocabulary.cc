#include "subword/vocabulary.h"

#include <unicode/uchar.h>
#include <unicode/utf8.h>
#include <xxhash.h>

#include <algorithm>
#include <charconv>
#include <unordered_set>
#include <fstream>
#include <sstream>

#include "core/text.h"
#include "core/utf8.h"
#include "io/output_file.h"

namespace sheaf {

const char* token_kind_name(TokenKind k) {
  switch (k) {
    case TokenKind::kSpecial: return "special";
    case TokenKind::kByte: return "byte";
    case TokenKind::kChar: return "char";
    case TokenKind::kMerged: return "merged";
    case TokenKind::kUser: return "user";
  }
  return "?";
}

std::string escape_token(std::string_view bytes) {
  std::string out;
  char buf[16];
  Utf8Cursor u(bytes);
  while (!u.done()) {
    size_t at = u.pos();
    UChar32 c = u.next();
    if (c < 0) {
      for (size_t k = at; k < u.pos(); ++k) {
        std::snprintf(buf, sizeof buf, "\\x%02X", u.data()[k]);
        out += buf;
      }
      continue;
    }
    switch (c) {
      case '\\': out += "\\\\"; continue;
      case ' ': out += "\\s"; continue;
      case '\t': out += "\\t"; continue;
      case '\n': out += "\\n"; continue;
      case '\r': out += "\\r"; continue;
      default: break;
    }
    int8_t t = u_charType(c);
    bool invisible = t == U_CONTROL_CHAR || t == U_FORMAT_CHAR || t == U_UNASSIGNED || t == U_SPACE_SEPARATOR ||
                     t == U_LINE_SEPARATOR || t == U_PARAGRAPH_SEPARATOR || t == U_PRIVATE_USE_CHAR ||
                     t == U_SURROGATE;
    if (invisible) {
      std::snprintf(buf, sizeof buf, "\\u{%04X}", static_cast<unsigned>(c));
      out += buf;
    } else {
      out.append(bytes.data() + at, u.pos() - at);
    }
  }
  return out;
}

Result<std::string> unescape_token(std::string_view s) {
  std::string out;
  auto bad = [&](const char* why) { return Error(ErrorKind::kInput, std::string(why) + " in \"" + std::string(s) + "\""); };
  for (size_t i = 0; i < s.size(); ++i) {
    if (s[i] != '\\') {
      out += s[i];
      continue;
    }
    if (++i >= s.size()) return bad("a lone backslash");
    char e = s[i];
    if (e == '\\') out += '\\';
    else if (e == 's') out += ' ';
    else if (e == 't') out += '\t';
    else if (e == 'n') out += '\n';
    else if (e == 'r') out += '\r';
    else if (e == 'x') {
      unsigned v = 0;
      if (i + 2 >= s.size()) return bad("a short \\x escape");
      auto r = std::from_chars(s.data() + i + 1, s.data() + std::min(s.size(), i + 3), v, 16);
      if (r.ec != std::errc() || r.ptr != s.data() + i + 3) return bad("a bad \\x escape");
      out += static_cast<char>(v);
      i += 2;
    } else if (e == 'u') {
      size_t close = s.find('}', i);
      if (i + 1 >= s.size() || s[i + 1] != '{' || close == std::string_view::npos) return bad("a bad \\u escape");
      unsigned v = 0;
      auto r = std::from_chars(s.data() + i + 2, s.data() + close, v, 16);
      if (r.ec != std::errc() || r.ptr != s.data() + close || v > 0x10FFFF || (v >= 0xD800 && v <= 0xDFFF))
        return bad("a bad \\u escape (not a Unicode scalar value)");
      char buf[4];
      int32_t k = 0;
      U8_APPEND_UNSAFE(buf, k, static_cast<UChar32>(v));
      out.append(buf, static_cast<size_t>(k));
      i = close;
    } else {
      return bad("an unknown escape");
    }
  }
  return out;
}

Vocabulary Vocabulary::build(const std::array<std::string, 4>& specials, const std::array<uint32_t, 4>& special_ids,
                             const std::vector<std::string>& alphabet, VocabularyInfo info) {
  Vocabulary v;
  v.info_ = std::move(info);
  v.special_ids_ = special_ids;
  v.tokens_.resize(4);
  for (int s = 0; s < 4; ++s) v.tokens_[special_ids[static_cast<size_t>(s)]] = Token{TokenKind::kSpecial, specials[static_cast<size_t>(s)]};
  for (int b = 0; b < 256; ++b) v.tokens_.push_back(Token{TokenKind::kByte, std::string(1, static_cast<char>(b))});
  v.bmp_ids_.assign(0x10000, kNoChar);
  for (const auto& c : alphabet) {
    // Only an entry of exactly one character can ever match one.
    UChar32 cp = utf8_single(c);
    uint32_t id = static_cast<uint32_t>(v.tokens_.size());
    if (cp >= 0) {
      if (cp < 0x10000) v.bmp_ids_[static_cast<size_t>(cp)] = id;
      else v.astral_ids_[cp] = id;
    }
    v.tokens_.push_back(Token{TokenKind::kChar, c});
  }
  v.alphabet_size_ = alphabet.size();
  return v;
}

uint32_t Vocabulary::add_merge(uint32_t left, uint32_t right) {
  tokens_.push_back(Token{TokenKind::kMerged, tokens_[left].bytes + tokens_[right].bytes, left, right});
  return static_cast<uint32_t>(tokens_.size() - 1);
}

uint32_t Vocabulary::add_user(std::string text) {
  tokens_.push_back(Token{TokenKind::kUser, text});
  users_.emplace_back(std::move(text), static_cast<uint32_t>(tokens_.size() - 1));
  return users_.back().second;
}

int64_t Vocabulary::user_id(std::string_view text) const {
  for (const auto& [t, id] : users_)
    if (t == text) return id;
  return -1;
}

int64_t Vocabulary::char_id(std::string_view utf8) const {
  UChar32 c = utf8_single(utf8);
  return c >= 0 ? id_of(c) : -1;
}

void Vocabulary::initial_symbols(std::string_view text, std::vector<uint32_t>& out) const {
  for_each_char(text, [&](UChar32 c, std::string_view bytes) {
    int64_t id = id_of(c);
    if (id >= 0) {
      out.push_back(static_cast<uint32_t>(id));
    } else if (info_.unknown_as_bytes) {
      for (char b : bytes) out.push_back(byte_token(static_cast<uint8_t>(b)));
    } else {
      out.push_back(special(kUnk));
    }
  });
}

namespace {

std::string body_of(const Vocabulary& v) {
  std::ostringstream o;
  const auto& in = v.info();
  o << "sheaf-vocabulary\t" << (v.user_tokens().empty() ? 1 : kVocabularyFormat) << "\n";
  o << "side\t" << in.side << "\n";
  o << "tokens\t" << v.size() << "\n";
  o << "alphabet\t" << v.alphabet_size() << "\n";
  o << "merges\t" << v.merges() << "\n";
  if (!v.user_tokens().empty()) o << "user-tokens\t" << v.user_tokens().size() << "\n";
  char cov[32];
  std::snprintf(cov, sizeof cov, "%.6f", in.alphabet_coverage);
  o << "alphabet-coverage\t" << cov << "\n";
  o << "single-digits\t" << (in.single_digits ? "yes" : "no") << "\n";
  o << "unknown-as-bytes\t" << (in.unknown_as_bytes ? "yes" : "no") << "\n";
  static const char* roles[4] = {"pad", "unk", "bos", "eos"};
  for (int s = 0; s < 4; ++s) o << "special-" << roles[s] << "\t" << v.special(static_cast<Special>(s)) << "\n";
  o << "--\n";
  for (uint32_t id = 0; id < v.size(); ++id) {
    const Token& t = v.token(id);
    o << id << "\t" << token_kind_name(t.kind) << "\t" << escape_token(t.bytes);
    if (t.kind == TokenKind::kMerged) o << "\t" << t.left << "+" << t.right;
    o << "\n";
  }
  return o.str();
}

}  // namespace

std::string Vocabulary::serialize() const {
  std::string body = body_of(*this);
  return body + "checksum\t" + hex64(XXH3_64bits(body.data(), body.size())) + "\n";
}

uint64_t Vocabulary::checksum() const {
  std::string body = body_of(*this);
  return XXH3_64bits(body.data(), body.size());
}

Result<Vocabulary> Vocabulary::parse(std::string_view text, const std::string& name) {
  auto fail = [&](uint64_t line, const std::string& what) {
    return Error(ErrorKind::kInput, "not a valid sheaf vocabulary: " + what, Location{name, line, 0, {}});
  };
  size_t cs = text.rfind("checksum\t");
  if (cs == std::string_view::npos || (cs > 0 && text[cs - 1] != '\n'))
    return fail(0, "no checksum line (truncated file?)");
  std::string_view body = text.substr(0, cs);
  std::string_view tail = text.substr(cs + 9);
  if (!tail.empty() && tail.back() == '\n') tail.remove_suffix(1);
  if (tail != hex64(XXH3_64bits(body.data(), body.size())))
    return fail(0, "the checksum does not match (the file was damaged or edited)");
  std::vector<std::string_view> lines;
  for (size_t start = 0; start < body.size();) {
    size_t nl = body.find('\n', start);
    if (nl == std::string_view::npos) return fail(lines.size() + 1, "a line without its end");
    lines.push_back(body.substr(start, nl - start));
    start = nl + 1;
  }
  std::unordered_map<std::string, std::string> head;
  size_t i = 0;
  for (; i < lines.size() && lines[i] != "--"; ++i) {
    size_t tab = lines[i].find('\t');
    if (tab == std::string_view::npos) return fail(i + 1, "a header line without a tab");
    head[std::string(lines[i].substr(0, tab))] = std::string(lines[i].substr(tab + 1));
  }
  const std::string& version = head["sheaf-vocabulary"];
  if (version != "1" && version != std::to_string(kVocabularyFormat))
    return fail(1, "format version " + version + " is not 1 or " + std::to_string(kVocabularyFormat));
  auto num = [&](const std::string& k, uint64_t& out) {
    auto it = head.find(k);
    if (it == head.end()) return false;
    auto r = std::from_chars(it->second.data(), it->second.data() + it->second.size(), out);
    return r.ec == std::errc() && r.ptr == it->second.data() + it->second.size();
  };
  uint64_t ntok = 0, nalpha = 0, nmerge = 0, nuser = 0;
  if (version != "1" && !num("user-tokens", nuser)) return fail(0, "format 2 needs a user-tokens count");
  std::array<uint64_t, 4> sp{};
  if (!num("tokens", ntok) || !num("alphabet", nalpha) || !num("merges", nmerge) || !num("special-pad", sp[0]) ||
      !num("special-unk", sp[1]) || !num("special-bos", sp[2]) || !num("special-eos", sp[3]))
    return fail(0, "a header field is missing or not a number");
  if (ntok != 4 + 256 + nalpha + nmerge + nuser) return fail(0, "the token counts do not add up");
  std::array<bool, 4> seen{};
  for (uint64_t s : sp) {
    if (s > 3 || seen[s]) return fail(0, "special ids must be 0, 1, 2 and 3, each once");
    seen[s] = true;
  }
  VocabularyInfo info;
  info.side = head["side"];
  // The two switches change how text is cut and encoded: each must be
  // written, as yes or no (a file with other keys, e.g. from before they
  // were named so, is refused rather than read with a guess).
  auto flag = [&](const std::string& k, bool& out) {
    auto it = head.find(k);
    if (it == head.end() || (it->second != "yes" && it->second != "no")) return false;
    out = it->second == "yes";
    return true;
  };
  if (!flag("single-digits", info.single_digits) || !flag("unknown-as-bytes", info.unknown_as_bytes))
    return fail(0, "the header needs single-digits and unknown-as-bytes, each yes or no");
  info.alphabet_coverage = std::atof(head["alphabet-coverage"].c_str());
  if (lines.size() - i - 1 != ntok) return fail(0, "the file holds " + std::to_string(lines.size() - i - 1) + " tokens, not " + std::to_string(ntok));
  std::array<std::string, 4> specials;
  std::vector<std::string> alphabet;
  std::unordered_set<std::string> alphabet_seen;
  std::vector<std::pair<uint32_t, uint32_t>> merges;
  std::vector<std::string> users;
  for (uint64_t id = 0; id < ntok; ++id) {
    size_t ln = i + 1 + id;
    std::string_view l = lines[ln];
    std::vector<std::string_view> f;
    for (size_t s = 0;;) {
      size_t tab = l.find('\t', s);
      f.push_back(l.substr(s, tab - s));
      if (tab == std::string_view::npos) break;
      s = tab + 1;
    }
    if (f.size() < 3 || f[0] != std::to_string(id)) return fail(ln + 1, "token " + std::to_string(id) + " is missing or out of order");
    auto bytes = unescape_token(f[2]);
    if (!bytes.ok()) return fail(ln + 1, bytes.error().message());
    std::string_view kind = f[1];
    TokenKind want = id < 4                     ? TokenKind::kSpecial
                     : id < 260                 ? TokenKind::kByte
                     : id < 260 + nalpha        ? TokenKind::kChar
                     : id < 260 + nalpha + nmerge ? TokenKind::kMerged
                                                  : TokenKind::kUser;
    if (kind != token_kind_name(want)) return fail(ln + 1, "token " + std::to_string(id) + " should be of kind " + token_kind_name(want));
    if (want == TokenKind::kSpecial) {
      for (int s = 0; s < 4; ++s)
        if (sp[static_cast<size_t>(s)] == id) specials[static_cast<size_t>(s)] = *bytes;
    } else if (want == TokenKind::kByte) {
      if (bytes->size() != 1 || static_cast<uint8_t>((*bytes)[0]) != id - 4) return fail(ln + 1, "byte token with the wrong byte");
    } else if (want == TokenKind::kChar) {
      // Exactly one well-formed UTF-8 character (core/utf8.h; U8_NEXT refuses
      // surrogates, overlong forms and stray bytes), and each only once.
      if (utf8_single(*bytes) < 0) return fail(ln + 1, "a character token must hold one well-formed UTF-8 character");
      if (!alphabet_seen.insert(*bytes).second) return fail(ln + 1, "the character token is repeated");
      alphabet.push_back(*bytes);
    } else if (want == TokenKind::kUser) {
      if (bytes->empty() || std::find(users.begin(), users.end(), *bytes) != users.end())
        return fail(ln + 1, "a user-defined token must be non-empty and given once");
      users.push_back(*bytes);
    } else {
      if (f.size() != 4) return fail(ln + 1, "a merged token needs LEFT+RIGHT");
      size_t plus = f[3].find('+');
      if (plus == std::string_view::npos) return fail(ln + 1, "a merged token needs LEFT+RIGHT");
      uint64_t a = 0, b = 0;
      auto ra = std::from_chars(f[3].data(), f[3].data() + plus, a);
      auto rb = std::from_chars(f[3].data() + plus + 1, f[3].data() + f[3].size(), b);
      if (ra.ec != std::errc() || rb.ec != std::errc() || a >= id || b >= id || a < 4 || b < 4)
        return fail(ln + 1, "a merged token must join two earlier tokens");
      merges.emplace_back(static_cast<uint32_t>(a), static_cast<uint32_t>(b));
      (void)bytes;
    }
  }
  std::array<uint32_t, 4> ids;
  for (int s = 0; s < 4; ++s) ids[static_cast<size_t>(s)] = static_cast<uint32_t>(sp[static_cast<size_t>(s)]);
  Vocabulary v = build(specials, ids, alphabet, info);
  for (size_t m = 0; m < merges.size(); ++m) {
    uint32_t id = v.add_merge(merges[m].first, merges[m].second);
    std::string_view l = lines[i + 1 + id];
    size_t t1 = l.find('\t'), t2 = l.find('\t', t1 + 1), t3 = l.find('\t', t2 + 1);
    auto bytes = unescape_token(l.substr(t2 + 1, t3 - t2 - 1));
    if (!bytes.ok() || *bytes != v.token(id).bytes) return fail(i + 2 + id, "a merged token's text is not its parts' text");
  }
  for (auto& u : users) v.add_user(std::move(u));
  return v;
}

Result<Vocabulary> Vocabulary::load(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) return Error(ErrorKind::kInput, "cannot read the vocabulary file; check the path", Location{path, 0, 0, {}});
  std::ostringstream s;
  s << in.rdbuf();
  return parse(s.str(), path);
}

}  // namespace sheaf
