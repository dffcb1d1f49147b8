#include "run/run_record.h"

#include <nlohmann/json.hpp>

#include <charconv>
#include <filesystem>
#include <fstream>
#include <sstream>

#include "io/output_file.h"

namespace sheaf {

nlohmann::ordered_json corpora_json(const RunRecord& r) {
  using nlohmann::ordered_json;
  ordered_json all = ordered_json::array();
  for (const auto& c : r.corpora) {
    ordered_json inputs = ordered_json::array();
    for (const auto& in : c.inputs) inputs.push_back(in.path);
    ordered_json stages = ordered_json::object();
    for (size_t i = 0; i < c.stage_out.size() && i < r.stages.size(); ++i) stages[r.stages[i].name] = c.stage_out[i];
    ordered_json reasons = ordered_json::object(), splits = ordered_json::object();
    for (const auto& [k, v] : c.reasons) reasons[k] = v;
    for (const auto& [k, v] : c.splits) splits[k] = v;
    all.push_back({{"name", c.name},
                   {"layout", c.layout},
                   {"weight", c.weight},
                   {"held_out", c.held_out},
                   {"inputs", inputs},
                   {"counts", {{"read", c.read}, {"kept", c.kept}, {"rejected", c.rejected}}},
                   {"stages_out", stages},
                   {"rejected", reasons},
                   {"splits", splits}});
  }
  return all;
}

nlohmann::ordered_json stage_count_json(const StageCount& s, bool examples) {
  using nlohmann::ordered_json;
  ordered_json o = {{"name", s.name}, {"kind", s.kind}, {"in", s.in}, {"out", s.out}};
  ordered_json reasons = ordered_json::object();
  for (const auto& [k, v] : s.reasons) reasons[k] = v;
  o["rejected"] = reasons;
  if (examples) {
    ordered_json ex = ordered_json::object();
    for (const auto& [k, list] : s.examples) {
      ordered_json a = ordered_json::array();
      for (const auto& e : list) a.push_back({{"line", e.line}, {"reason", e.reason}, {"text", e.text}});
      ex[k] = a;
    }
    o["examples"] = ex;
  }
  if (!s.counters.empty()) {
    ordered_json c = ordered_json::object();
    for (const auto& [k, v] : s.counters) c[k] = v;
    o["counters"] = c;
  }
  return o;
}

std::string run_record_json(const RunRecord& r) {
  using nlohmann::ordered_json;
  ordered_json j;
  j["format"] = "sheaf-run-record";
  j["format_version"] = kRunRecordFormat;
  j["tool"] = "sheaf";
  j["tool_version"] = r.tool_version;
  j["pipeline_hash"] = hex64(r.pipeline_hash);
  j["complete"] = r.stopped_after.empty();
  if (!r.stopped_after.empty()) j["stopped_after"] = r.stopped_after;
  ordered_json inputs = ordered_json::array();
  for (const auto& in : r.inputs)
    inputs.push_back({{"path", in.path}, {"size", in.bytes}, {"xxh3_64", hex64(in.checksum)},
                      {"compression", in.compression}, {"lines", in.lines}});
  j["layout"] = r.layout;
  j["inputs"] = inputs;
  j["counts"] = {{"read", r.read}, {"kept", r.kept}, {"rejected", r.rejected}};
  if (!r.corpora.empty()) j["corpora"] = corpora_json(r);
  ordered_json stages = ordered_json::array();
  for (const auto& s : r.stages) stages.push_back(stage_count_json(s, false));
  j["stages"] = stages;
  ordered_json splits = ordered_json::object();
  for (const auto& [k, v] : r.splits) splits[k] = v;
  j["splits"] = splits;
  ordered_json ov = ordered_json::array();
  for (const auto& o : r.overlaps) ov.push_back({{"split", o.a}, {"other", o.b}, {"shared_keys", o.keys}});
  j["split_overlap"] = ov;
  ordered_json outs = ordered_json::array();
  for (const auto& o : r.outputs) {
    ordered_json e = {{"path", o.path}, {"kind", o.kind}};
    if (!o.split.empty()) e["split"] = o.split;
    if (!o.side.empty()) e["side"] = o.side;
    e["records"] = o.records;
    e["size"] = o.size;
    e["xxh3_64"] = hex64(o.checksum);
    outs.push_back(e);
  }
  j["outputs"] = outs;
  if (r.vocabulary) j["vocabulary"] = vocabulary_json(*r.vocabulary);
  if (r.shards) j["shards"] = shards_json(*r.shards);
  return j.dump(2, ' ', false, ordered_json::error_handler_t::replace) + "\n";
}

using nlohmann::ordered_json;

namespace {

nlohmann::ordered_json distribution_object(const Distribution& d) {
  return {{"count", d.count}, {"sum", d.sum}, {"mean", d.mean}, {"min", d.min}, {"p50", d.p50},
          {"p90", d.p90},     {"p95", d.p95}, {"p99", d.p99},   {"max", d.max}};
}

}  // namespace

double byte_token_rate(const TokenLengths& t) {
  return t.tokens ? static_cast<double>(t.byte_tokens) / static_cast<double>(t.tokens) : 0.0;
}

nlohmann::ordered_json vocabulary_json(const VocabularyReport& v) {
  ordered_json j = {{"stage", v.stage},
                    {"shared", v.shared},
                    {"size", v.size},
                    {"learned_up_to", v.learned_up_to},
                    {"sweep_split", v.sweep_split}};
  if (v.reuse) {
    ordered_json reused = ordered_json::array();
    for (const auto& r : v.reused) {
      ordered_json e = {{"side", r.side}, {"file", r.file}, {"xxh3_64", hex64(r.checksum)}};
      if (r.has_old_run) {
        ordered_json old = {{"summary", r.old_summary}};
        for (const auto& [side, figures] : r.old_figures) {
          ordered_json f = ordered_json::object();
          for (const auto& [k, x] : figures) f[k] = x;
          old[side] = f;
        }
        e["old_run"] = old;
      } else {
        e["old_run"] = nullptr;
      }
      reused.push_back(e);
    }
    j["reused"] = reused;
  }
  ordered_json vocabs = ordered_json::array();
  for (const auto& e : v.vocabularies) {
    ordered_json o = {{"side", e.side},
                      {"file", e.file},
                      {"size", e.size},
                      {"alphabet", e.alphabet},
                      {"alphabet_coverage", e.alphabet_coverage},
                      {"merges", e.merges},
                      {"learned_merges", e.learned_merges},
                      {"stopped_early", e.stopped_early}};
    if (!e.reused_from.empty()) {
      o["reused_from"] = e.reused_from;
    } else {
      o["word_types"] = e.word_types;
      o["word_units"] = e.word_units;
      o["distinct_characters"] = e.distinct_characters;
    }
    ordered_json sweep = ordered_json::object();
    for (const auto& [side, rows] : e.sweep) {
      ordered_json a = ordered_json::array();
      for (const auto& r : rows)
        a.push_back({{"size", r.size},
                     {"effective_size", r.effective_size},
                     {"sentences", r.tokens.count},
                     {"tokens", r.token_total},
                     {"mean_tokens", r.tokens.mean},
                     {"p95_tokens", r.tokens.p95},
                     {"p99_tokens", r.tokens.p99},
                     {"max_tokens", r.tokens.max},
                     {"tokens_per_word", r.tokens_per_word},
                     {"over_max_length", r.over_max_length},
                     {"byte_token_rate", r.byte_token_rate},
                     {"unknown_rate", r.unknown_rate}});
      sweep[side] = a;
    }
    o["sweep"] = sweep;
    vocabs.push_back(o);
  }
  j["vocabularies"] = vocabs;
  return j;
}

nlohmann::ordered_json shards_json(const ShardsReport& s) {
  ordered_json j = {{"stage", s.stage}, {"id_width", s.id_width}, {"order", s.order}, {"bos", s.bos}, {"eos", s.eos}};
  ordered_json splits = ordered_json::object();
  for (const auto& sp : s.splits) {
    ordered_json sj = ordered_json::object();
    for (int k = 0; k < 2; ++k) {
      const TokenLengths& t = sp.side[k];
      ordered_json side = distribution_object(t.lengths.summary());
      side["byte_tokens"] = t.byte_tokens;
      side["unknown_tokens"] = t.unknown;
      side["byte_token_rate"] = byte_token_rate(t);
      ordered_json hist = ordered_json::array();
      for (uint64_t c : t.lengths.counts()) hist.push_back(c);
      side["histogram"] = hist;
      sj[k == 0 ? "source" : "target"] = side;
    }
    sj["shards"] = sp.shards;
    splits[sp.split] = sj;
  }
  j["tokens"] = splits;
  if (s.separate)
    j["unused_in_train"] = {{"source", s.unused[0]}, {"target", s.unused[1]}};
  else
    j["unused_in_train"] = {{"shared", s.unused[0]}};
  return j;
}

constexpr uint64_t kMaxRecordBytes = uint64_t{256} << 20;

Result<std::vector<OutputEntry>> read_manifest_outputs(const std::string& path) {
  // A record is a small regular file: a link, a device (/dev/zero) or a huge
  // file under that name is not one, and is never read whole.
  std::error_code ec;
  auto st = std::filesystem::symlink_status(path, ec);
  if (ec || !std::filesystem::is_regular_file(st))
    return Error(ErrorKind::kInput, "not a sheaf run record (not a regular file)", Location{path, 0, 0, {}});
  if (std::filesystem::file_size(path, ec) > kMaxRecordBytes || ec)
    return Error(ErrorKind::kInput, "not a sheaf run record (larger than any record sheaf writes)",
                 Location{path, 0, 0, {}});
  std::ifstream in(path, std::ios::binary);
  if (!in) return Error(ErrorKind::kIo, "cannot read the run record", Location{path, 0, 0, {}});
  std::ostringstream text;
  text << in.rdbuf();
  // Checked throughout: a damaged or foreign file is an error value, never
  // an exception or a guess.
  auto j = nlohmann::json::parse(text.str(), nullptr, false);
  auto bad = [&](const std::string& what) {
    return Error(ErrorKind::kInput, "not a sheaf run record (" + what + ")", Location{path, 0, 0, {}});
  };
  if (j.is_discarded()) return bad("not JSON");
  if (!j.is_object()) return bad("not a JSON object");
  auto is = [&](const nlohmann::json& o, const char* key, const char* want) {
    auto it = o.find(key);
    return it != o.end() && it->is_string() && it->get_ref<const std::string&>() == want;
  };
  if (!is(j, "format", "sheaf-run-record") || !is(j, "tool", "sheaf")) return bad("no \"format\": \"sheaf-run-record\"");
  auto outs = j.find("outputs");
  if (outs == j.end() || !outs->is_array()) return bad("no \"outputs\" list");
  std::vector<OutputEntry> out;
  for (const auto& e : *outs) {
    if (!e.is_object()) return bad("an output is not an object");
    OutputEntry o;
    auto text_field = [&](const char* key, std::string& to, bool required) {
      auto it = e.find(key);
      if (it == e.end()) return !required;
      if (!it->is_string()) return false;
      to = it->get<std::string>();
      return true;
    };
    auto count_field = [&](const char* key, uint64_t& to) {
      auto it = e.find(key);
      if (it == e.end()) return true;
      if (!it->is_number_unsigned()) return false;
      to = it->get<uint64_t>();
      return true;
    };
    std::string sum;
    if (!text_field("path", o.path, true) || !text_field("kind", o.kind, false) ||
        !text_field("split", o.split, false) || !text_field("side", o.side, false) ||
        !text_field("xxh3_64", sum, false) || !count_field("records", o.records) || !count_field("size", o.size))
      return bad("an output entry has a field of the wrong type");
    // Outputs lie inside the run directory: a relative path of plain names.
    std::filesystem::path rel(o.path);
    bool inside = !o.path.empty() && rel.is_relative();
    for (const auto& part : rel) inside = inside && part != ".." && part != "." && !part.empty();
    if (!inside) return bad("an output path \"" + o.path + "\" is not a path inside the run directory");
    if (!sum.empty()) {
      auto r = std::from_chars(sum.data(), sum.data() + sum.size(), o.checksum, 16);
      if (sum.size() != 16 || r.ec != std::errc() || r.ptr != sum.data() + sum.size())
        return bad("an output's xxh3_64 is not 16 hexadecimal digits");
    }
    out.push_back(std::move(o));
  }
  return out;
}

}  // namespace sheaf
