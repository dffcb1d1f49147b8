#include "stages/markup.h"

#include <unicode/utf8.h>

#include <algorithm>
#include <iterator>
#include <cctype>
#include <cstdint>

namespace sheaf {

namespace {

// HTML element names (WHATWG HTML Living Standard, section "Elements",
// written from the standard's index), sorted for binary search.
constexpr std::string_view kElements[] = {
    "a",        "abbr",     "address",  "area",     "article",  "aside",    "audio",    "b",
    "base",     "bdi",      "bdo",      "big",      "blockquote", "body",   "br",       "button",
    "canvas",   "caption",  "center",   "cite",     "code",     "col",      "colgroup", "data",
    "datalist", "dd",       "del",      "details",  "dfn",      "dialog",   "div",      "dl",
    "dt",       "em",       "embed",    "fieldset", "figcaption", "figure", "font",     "footer",
    "form",     "h1",       "h2",       "h3",       "h4",       "h5",       "h6",       "head",
    "header",   "hgroup",   "hr",       "html",     "i",        "iframe",   "img",      "input",
    "ins",      "kbd",      "label",    "legend",   "li",       "link",     "main",     "map",
    "mark",     "menu",     "meta",     "meter",    "nav",      "noscript", "object",   "ol",
    "optgroup", "option",   "output",   "p",        "param",    "picture",  "pre",      "progress",
    "q",        "rp",       "rt",       "ruby",     "s",        "samp",     "script",   "search",
    "section",  "select",   "slot",     "small",    "source",   "span",     "strike",   "strong",
    "style",    "sub",      "summary",  "sup",      "table",    "tbody",    "td",       "template",
    "textarea", "tfoot",    "th",       "thead",    "time",     "title",    "tr",       "track",
    "tt",       "u",        "ul",       "var",      "video",    "wbr",
};

bool is_element(const std::string& name) {
  return std::binary_search(std::begin(kElements), std::end(kElements), std::string_view(name));
}

struct RawTag {
  MarkupTag tag;
  bool bare_open;  // an opening tag without attributes, not self-closing
  bool used;       // matched by a closing tag
};

}  // namespace

std::vector<MarkupTag> find_markup(std::string_view s) {
  std::vector<RawTag> raw;
  size_t n = s.size();
  for (size_t i = s.find('<'); i != std::string_view::npos && i < n; i = s.find('<', i + 1)) {
    size_t j = i + 1;
    bool close = j < n && s[j] == '/';
    j += close;
    size_t name_at = j;
    while (j < n && (std::isalnum(static_cast<unsigned char>(s[j])) != 0) && j < name_at + 16) ++j;
    if (j == name_at || !std::isalpha(static_cast<unsigned char>(s[name_at]))) continue;
    std::string name(s.substr(name_at, j - name_at));
    for (char& c : name) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
    if (!is_element(name)) continue;
    bool attrs = false, self_closing = false;
    if (j < n && (s[j] == ' ' || s[j] == '\t')) {
      size_t k = j;
      while (k < n && k < j + 200 && s[k] != '>' && s[k] != '<') ++k;
      if (k >= n || s[k] != '>') continue;
      attrs = s.find_first_not_of(" \t/", j) < k;
      self_closing = s[k - 1] == '/';
      j = k;
    } else if (j + 1 < n && s[j] == '/' && s[j + 1] == '>') {
      self_closing = true;
      ++j;
    }
    if (j >= n || s[j] != '>') continue;
    if (close && (attrs || self_closing)) continue;
    bool void_element = name == "br" || name == "hr" || name == "wbr";
    RawTag t{{i, j + 1, close ? "/" + name : name}, !close && !attrs && !self_closing && !void_element, false};
    raw.push_back(std::move(t));
  }
  // A bare opening tag is markup when a later closing tag of its element,
  // not yet matched, closes it (innermost first).
  for (size_t k = raw.size(); k-- > 0;) {
    if (!raw[k].bare_open) continue;
    for (size_t m = k + 1; m < raw.size(); ++m) {
      if (!raw[m].used && raw[m].tag.key.size() == raw[k].tag.key.size() + 1 && raw[m].tag.key[0] == '/' &&
          raw[m].tag.key.compare(1, std::string::npos, raw[k].tag.key) == 0) {
        raw[m].used = true;
        raw[k].bare_open = false;
        break;
      }
    }
  }
  std::vector<MarkupTag> out;
  for (auto& r : raw)
    if (!r.bare_open) out.push_back(std::move(r.tag));
  return out;
}

namespace {

// The character an entity at s[i] == '&' stands for (UTF-8) and its length,
// or 0.
size_t entity_at(std::string_view s, size_t i, std::string& repl) {
  static const std::pair<std::string_view, std::string_view> kNamed[] = {
      {"&lt;", "<"}, {"&gt;", ">"}, {"&amp;", "&"}, {"&quot;", "\""}, {"&apos;", "'"}, {"&nbsp;", " "}};
  for (const auto& [name, ch] : kNamed)
    if (s.substr(i, name.size()) == name) {
      repl.assign(ch);
      return name.size();
    }
  if (i + 3 >= s.size() || s[i + 1] != '#') return 0;
  size_t j = i + 2;
  bool hex = s[j] == 'x' || s[j] == 'X';
  j += hex;
  uint32_t v = 0;
  size_t d = j;
  while (j < s.size() && j < d + 7 &&
         (hex ? std::isxdigit(static_cast<unsigned char>(s[j])) : std::isdigit(static_cast<unsigned char>(s[j])))) {
    char c = static_cast<char>(std::tolower(static_cast<unsigned char>(s[j])));
    v = v * (hex ? 16 : 10) + static_cast<uint32_t>(c <= '9' ? c - '0' : c - 'a' + 10);
    ++j;
  }
  if (j == d || j >= s.size() || s[j] != ';') return 0;
  // Only characters that are text: no controls, surrogates or noncharacters.
  if (v < 0x20 || (v >= 0x7F && v < 0xA0) || (v >= 0xD800 && v <= 0xDFFF) || v > 0x10FFFF || (v & 0xFFFE) == 0xFFFE)
    return 0;
  char buf[4];
  int32_t k = 0;
  U8_APPEND_UNSAFE(buf, k, static_cast<UChar32>(v));
  repl.assign(v == 0xA0 ? " " : std::string_view(buf, static_cast<size_t>(k)));
  return j + 1 - i;
}

}  // namespace

std::string remove_markup(std::string_view s, const std::vector<MarkupTag>& tags, size_t* entities) {
  std::string out, repl;
  out.reserve(s.size());
  size_t t = 0, decoded = 0;
  for (size_t i = 0; i < s.size();) {
    if (t < tags.size() && i == tags[t].begin) {
      out.push_back(' ');
      i = tags[t++].end;
      continue;
    }
    if (s[i] == '&') {
      size_t len = entity_at(s, i, repl);
      if (len) {
        out += repl;
        i += len;
        ++decoded;
        continue;
      }
    }
    out.push_back(s[i++]);
  }
  if (entities) *entities = decoded;
  return out;
}

}  // namespace sheaf
