#include "io/pair_reader.h"

#include <nlohmann/json.hpp>

#include <algorithm>
#include <cstring>

namespace sheaf {

Result<std::unique_ptr<PairReader>> PairReader::open(const CorpusSpec& spec, const std::vector<std::string>& paths) {
  return open(std::vector<CorpusSpec>{spec}, std::vector<std::vector<std::string>>{paths});
}

Result<std::unique_ptr<PairReader>> PairReader::open(const std::vector<CorpusSpec>& corpora,
                                                     const std::vector<std::vector<std::string>>& paths) {
  std::vector<Source> sources;
  for (size_t c = 0; c < corpora.size(); ++c) {
    Source s;
    s.spec = corpora[c];
    s.paths = paths[c];
    for (const auto& path : paths[c]) {
      auto src = open_byte_source(path);
      if (!src.ok()) return src.error();
      s.readers.push_back(std::make_unique<LineReader>(std::move(src.value()), corpora[c].max_line_bytes));
    }
    sources.push_back(std::move(s));
  }
  return std::unique_ptr<PairReader>(new PairReader(std::move(sources)));
}

Result<std::unique_ptr<PairReader>> PairReader::open_part(const std::vector<CorpusSpec>& corpora,
                                                          const std::vector<std::vector<std::string>>& paths,
                                                          size_t corpus, bool whole, uint64_t begin, uint64_t end) {
  std::vector<Source> sources(corpora.size());
  for (size_t c = 0; c < corpora.size(); ++c) sources[c].spec = corpora[c];
  if (corpus >= corpora.size() || (!whole && paths[corpus].size() != 1))
    return Error(ErrorKind::kInternal, "a part names a corpus or file the pipeline does not have");
  Source& s = sources[corpus];
  s.paths = paths[corpus];
  for (const auto& path : paths[corpus]) {
    auto src = whole ? open_byte_source(path) : open_byte_range(path, begin, end);
    if (!src.ok()) return src.error();
    s.readers.push_back(std::make_unique<LineReader>(std::move(src.value()), corpora[corpus].max_line_bytes));
    if (!whole && begin > 0) s.readers.back()->set_mid_stream();
  }
  auto r = std::unique_ptr<PairReader>(new PairReader(std::move(sources)));
  r->current_ = corpus;
  r->stop_ = corpus + 1;
  return r;
}

void PairReader::set_oversize_sink(const OversizeSink& sink) {
  for (size_t c = 0; c < sources_.size(); ++c) {
    auto& readers = sources_[c].readers;
    for (size_t i = 0; i < readers.size(); ++i) {
      std::string side = readers.size() == 2 ? side_name(static_cast<int>(i)) : "-";
      readers[i]->set_oversize_sink([sink, c, side](uint64_t line, std::string_view bytes, bool last) {
        return sink(c, side, line, bytes, last);
      });
    }
  }
}

std::vector<InputInfo> PairReader::inputs(size_t corpus) const {
  std::vector<InputInfo> out;
  const Source& s = sources_[corpus];
  for (size_t i = 0; i < s.readers.size(); ++i) {
    const auto& r = *s.readers[i];
    out.push_back({s.paths[i], r.source().file_bytes(), r.source().checksum(), compression_name(r.compression()),
                   r.lines()});
  }
  return out;
}

std::vector<InputInfo> PairReader::inputs() const {
  std::vector<InputInfo> out;
  for (size_t c = 0; c < sources_.size(); ++c)
    for (auto& in : inputs(c)) out.push_back(std::move(in));
  return out;
}

uint64_t PairReader::consumed() const {
  uint64_t n = 0;
  for (const auto& s : sources_)
    for (const auto& r : s.readers) n += r->consumed();
  return n;
}

Status PairReader::length_mismatch(Source& src, int shorter) {
  // Count the rest of the longer file so the message gives both counts.
  auto& readers = src.readers;
  LineReader& longer = *readers[static_cast<size_t>(1 - shorter)];
  Line l;
  for (;;) {
    auto more = longer.next(l);
    if (!more.ok()) return more.error();
    if (!*more) break;
  }
  return Error(ErrorKind::kInput,
               "the aligned files have different numbers of lines: " + readers[0]->name() + " has " +
                   std::to_string(readers[0]->lines()) + ", " + readers[1]->name() + " has " +
                   std::to_string(readers[1]->lines()) + "; line N of one must translate line N of the other",
               Location{readers[static_cast<size_t>(shorter)]->name(), 0, 0, {}});
}

namespace {

// Places the raw line into the batch buffer; views are fixed up later since
// the buffer may move while it grows.
struct Pending {
  size_t off, len, off2, len2;
  size_t skip, skip2;  // bytes of a byte-order mark before the text
};

}  // namespace

void PairReader::parse_tsv(PairBatch& b, Pair& p, std::string_view line) {
  const char* tab = static_cast<const char*>(std::memchr(line.data(), '\t', line.size()));
  if (tab == nullptr) {
    b.drop(p, kReadStage, "no-tab");
    return;
  }
  size_t at = static_cast<size_t>(tab - line.data());
  if (std::memchr(tab + 1, '\t', line.size() - at - 1) != nullptr) {
    b.drop(p, kReadStage, "extra-tab");
    return;
  }
  p.text[0] = line.substr(0, at);
  p.text[1] = line.substr(at + 1);
}

void PairReader::parse_jsonl(const CorpusSpec& spec, PairBatch& b, Pair& p, std::string_view line) {
  auto j = nlohmann::json::parse(line.begin(), line.end(), nullptr, false);
  if (j.is_discarded() || !j.is_object()) {
    b.drop(p, kReadStage, "bad-json");
    return;
  }
  const std::string* field[2] = {&spec.source_field, &spec.target_field};
  for (int s = 0; s < 2; ++s) {
    auto it = j.find(*field[s]);
    if (it == j.end()) {
      b.drop(p, kReadStage, "missing-field:" + *field[s]);
      return;
    }
    if (!it->is_string()) {
      b.drop(p, kReadStage, "not-a-string:" + *field[s]);
      return;
    }
    p.text[s] = b.arena.copy(it->get_ref<const std::string&>());
  }
}

Result<bool> PairReader::next(PairBatch& b, size_t max_pairs, size_t max_bytes) {
  while (current_ < std::min(sources_.size(), stop_)) {
    auto more = next_from(sources_[current_], b, max_pairs, max_bytes);
    if (!more.ok() || *more) {
      if (more.ok())
        for (Pair& p : b.pairs) p.corpus = static_cast<uint32_t>(current_);
      return more;
    }
    ++current_;
  }
  return false;
}

Result<bool> PairReader::next_from(Source& src, PairBatch& b, size_t max_pairs, size_t max_bytes) {
  auto& readers = src.readers;
  std::vector<Pending> pend;
  pend.reserve(max_pairs);
  std::vector<std::string> oversize_reason;
  uint64_t start = consumed();
  bool aligned = readers.size() == 2;
  Line a, t;
  while (pend.size() < max_pairs && b.raw.size() + b.raw_target.size() < max_bytes) {
    auto more = readers[0]->next(a);
    if (!more.ok()) return more.error();
    if (aligned) {
      auto more2 = readers[1]->next(t);
      if (!more2.ok()) return more2.error();
      if (*more != *more2) {
        Status st = length_mismatch(src, *more ? 1 : 0);
        return st.error();
      }
    }
    if (!*more) break;
    Pending pd{b.raw.size(), a.raw.size(), b.raw_target.size(), 0, a.raw.size() - a.text.size(), 0};
    b.raw.append(a.raw);
    std::string reason;
    if (a.oversize) reason = "line-too-long:" + std::to_string(a.length);
    if (aligned) {
      pd.len2 = t.raw.size();
      pd.skip2 = t.raw.size() - t.text.size();
      b.raw_target.append(t.raw);
      if (t.oversize && reason.empty()) reason = "line-too-long:" + std::to_string(t.length);
    }
    pend.push_back(pd);
    oversize_reason.push_back(std::move(reason));
  }
  if (pend.empty()) return false;
  b.pairs.resize(pend.size());
  uint64_t first = readers[0]->lines() - pend.size() + 1;
  for (size_t i = 0; i < pend.size(); ++i) {
    Pair& p = b.pairs[i];
    p.line = first + i;
    p.raw = std::string_view(b.raw).substr(pend[i].off, pend[i].len);
    if (aligned) p.raw_target = std::string_view(b.raw_target).substr(pend[i].off2, pend[i].len2);
    if (!oversize_reason[i].empty()) {
      b.drop(p, kReadStage, std::move(oversize_reason[i]));
      continue;
    }
    auto has_nul = [](std::string_view v) { return !v.empty() && std::memchr(v.data(), 0, v.size()) != nullptr; };
    if (has_nul(p.raw) || has_nul(p.raw_target)) {
      b.drop(p, kReadStage, "nul-byte");
      continue;
    }
    // The raw views keep a byte-order mark (rejected.tsv is byte-exact); the
    // text does not.
    std::string_view body = p.raw.substr(pend[i].skip);
    switch (src.spec.layout) {
      case Layout::kTsv: parse_tsv(b, p, body); break;
      case Layout::kAligned:
        p.text[0] = body;
        p.text[1] = p.raw_target.substr(pend[i].skip2);
        break;
      case Layout::kJsonl: parse_jsonl(src.spec, b, p, body); break;
    }
  }
  b.input_bytes = consumed() - start;
  return true;
}

}  // namespace sheaf
