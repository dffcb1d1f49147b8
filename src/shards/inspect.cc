#include "shards/inspect.h"

#include <filesystem>
#include <optional>

#include "io/output_file.h"
#include "run/run_record.h"
#include "shards/shard_reader.h"
#include "subword/codec.h"

namespace fs = std::filesystem;

namespace sheaf {

namespace {

std::string count_of(uint64_t n, const char* one, const char* many) {
  return std::to_string(n) + " " + (n == 1 ? one : many);
}

// With the shard's vocabularies at hand (beside it in its run directory),
// every id must lie within them.
Status ids_within_vocabularies(const ShardReader& r, const std::string& path, bool& checked) {
  checked = false;
  auto vs = vocabularies_for_shard(path, {});
  if (!vs.ok()) return {};  // not at hand: the ids cannot be checked
  checked = true;
  for (int s = 0; s < 2; ++s)
    if (r.max_id(s) >= (*vs)[static_cast<size_t>(s)].size())
      return Error(ErrorKind::kInput,
                   std::string("damaged shard: the ") + (s ? "target" : "source") + " side holds id " +
                       std::to_string(r.max_id(s)) + ", beyond its vocabulary of " +
                       std::to_string((*vs)[static_cast<size_t>(s)].size()),
                   Location{path, 0, 0, {}});
  return {};
}

std::string specials(const uint32_t (&ids)[4]) {
  return "pad " + std::to_string(ids[kPad]) + ", unk " + std::to_string(ids[kUnk]) + ", bos " +
         std::to_string(ids[kBos]) + ", eos " + std::to_string(ids[kEos]);
}
}  // namespace

Status inspect_shard(const std::string& path, std::ostream& out) {
  auto r = ShardReader::open(path);
  bool vocab_checked = false;
  Status ids_ok = r.ok() ? ids_within_vocabularies(*r, path, vocab_checked) : Status{};
  if (!r.ok() || !ids_ok.ok()) {
    const Error& e = r.ok() ? ids_ok.error() : r.error();
    out << path << ": DAMAGED: " << e.message() << "\n";
    return e;
  }
  const ShardHeader& h = r->header();
  out << path << ": ok\n"
      << "  format version   " << h.version << "\n"
      << "  shard index      " << h.shard_index << "\n"
      << "  pairs            " << h.pairs << "\n"
      << "  id width         " << h.id_width * 8 << " bits\n"
      << "  order            " << (h.order == kLengthOrder ? "grouped by length" : "input order") << "\n"
      << "  bos / eos        " << ((h.flags & kHasBos) ? "yes" : "no") << " / " << ((h.flags & kHasEos) ? "yes" : "no") << "\n"
      << "  source ids       " << h.source_count << " (max id " << r->max_id(0) << "), vocabulary " << hex64(h.source_vocab) << "\n"
      << "  target ids       " << h.target_count << " (max id " << r->max_id(1) << "), vocabulary " << hex64(h.target_vocab) << "\n"
      << "  special ids      "
      << (h.source_specials[0] == kUnknownSpecial
              ? std::string("not recorded (format 1)")
              : specials(h.source_specials) + " (source); " + specials(h.target_specials) + " (target)")
      << "\n"
      << "  file size        " << h.file_size << " bytes, checksums verified\n"
      << "  ids              " << (vocab_checked ? "all within their vocabularies" : "not checked (no vocabulary beside the shard)")
      << "\n";
  return {};
}

Status inspect_run(const std::string& dir, std::ostream& out) {
  std::string manifest = (fs::path(dir) / "manifest.json").string();
  std::error_code ec;
  if (!fs::exists(manifest, ec))
    return Error(ErrorKind::kInput, "no manifest.json: not a completed sheaf run (an interrupted run leaves none)",
                 Location{dir, 0, 0, {}});
  auto outs = read_manifest_outputs(manifest);
  if (!outs.ok()) return outs.error();
  std::optional<Error> first;
  for (const auto& o : *outs) {
    std::string p = (fs::path(dir) / o.path).string();
    uint64_t size = 0;
    auto sum = checksum_file(p, &size);
    std::string verdict = "ok";
    if (!sum.ok()) verdict = "MISSING";
    else if (size != o.size) verdict = "WRONG SIZE (" + std::to_string(size) + " bytes, record says " + std::to_string(o.size) + ")";
    else if (*sum != o.checksum) verdict = "WRONG CHECKSUM";
    if (verdict == "ok" && o.kind == "shard") {
      auto r = ShardReader::open(p);
      bool checked = false;
      Status ids_ok = r.ok() ? ids_within_vocabularies(*r, p, checked) : Status{};
      if (!r.ok()) verdict = "DAMAGED: " + r.error().message();
      else if (!ids_ok.ok()) verdict = "DAMAGED: " + ids_ok.error().message();
    }
    out << (verdict == "ok" ? "ok       " : "PROBLEM  ") << o.path << "  (" << o.kind << ", " << count_of(o.records, "record", "records") << ")"
        << (verdict == "ok" ? "" : ": " + verdict) << "\n";
    if (verdict != "ok" && !first) first = Error(ErrorKind::kInput, o.path + ": " + verdict, Location{dir, 0, 0, {}});
  }
  if (first) return *first;
  return {};
}

Result<std::vector<Vocabulary>> vocabularies_for_shard(const std::string& shard, const std::vector<std::string>& given) {
  auto r = ShardReader::open(shard);
  if (!r.ok()) return r.error();
  uint64_t want[2] = {r->header().source_vocab, r->header().target_vocab};
  std::vector<Vocabulary> found(2);
  bool have[2] = {false, false};
  std::vector<std::string> candidates = given;
  if (candidates.empty()) {
    // The shard's run directory holds the vocabularies.
    fs::path run = fs::path(shard).parent_path().parent_path();
    for (const char* n : {"vocab.shared.txt", "vocab.source.txt", "vocab.target.txt"})
      if (std::error_code ec; fs::exists(run / n, ec)) candidates.push_back((run / n).string());
  }
  for (const auto& c : candidates) {
    auto v = Vocabulary::load(c);
    if (!v.ok()) return v.error();
    for (int s = 0; s < 2; ++s)
      if (!have[s] && v->checksum() == want[s]) {
        found[static_cast<size_t>(s)] = *v;
        have[s] = true;
      }
  }
  for (int s = 0; s < 2; ++s)
    if (!have[s])
      return Error(ErrorKind::kInput,
                   std::string("no vocabulary matches the shard's ") + (s ? "target" : "source") + " checksum " +
                       hex64(want[s]) + "; pass the vocabulary it was written with (--vocab FILE)",
                   Location{shard, 0, 0, {}});
  return found;
}

Status decode_shard(const std::string& path, const std::vector<Vocabulary>& vocabs, std::ostream& out) {
  auto r = ShardReader::open(path);
  if (!r.ok()) return r.error();
  for (int s = 0; s < 2; ++s)
    if (r->max_id(s) >= vocabs[static_cast<size_t>(s)].size())
      return Error(ErrorKind::kInput, "the shard holds ids beyond its vocabulary", Location{path, 0, 0, {}});
  std::vector<uint32_t> ids;
  std::string line;
  for (uint64_t i = 0; i < r->pairs(); ++i) {
    r->ids(i, 0, ids);
    line = decode(vocabs[0], ids);
    line += '\t';
    r->ids(i, 1, ids);
    line += decode(vocabs[1], ids);
    line += '\n';
    out << line;
  }
  return {};
}

}  // namespace sheaf
