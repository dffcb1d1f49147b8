#include "report/run_record.h"

#include <nlohmann/json.hpp>

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
  for (const auto& s : r.stages) {
    ordered_json o = {{"name", s.name}, {"kind", s.kind}, {"in", s.in}, {"out", s.out}};
    ordered_json reasons = ordered_json::object();
    for (const auto& [k, v] : s.reasons) reasons[k] = v;
    o["rejected"] = reasons;
    if (!s.counters.empty()) {
      ordered_json c = ordered_json::object();
      for (const auto& [k, v] : s.counters) c[k] = v;
      o["counters"] = c;
    }
    stages.push_back(o);
  }
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
  for (const auto& [key, value] : r.sections) j[key] = ordered_json::parse(value);
  return j.dump(2, ' ', false, ordered_json::error_handler_t::replace) + "\n";
}

Result<std::vector<OutputEntry>> read_manifest_outputs(const std::string& path) {
  std::ifstream in(path);
  if (!in) return Error(ErrorKind::kIo, "cannot read the run record", Location{path, 0, 0, {}});
  auto j = nlohmann::json::parse(in, nullptr, false);
  if (j.is_discarded() || !j.is_object() || j.value("tool", "") != "sheaf" || !j.contains("outputs") ||
      !j["outputs"].is_array())
    return Error(ErrorKind::kInput, "not a sheaf run record", Location{path, 0, 0, {}});
  std::vector<OutputEntry> out;
  for (const auto& e : j["outputs"]) {
    if (!e.is_object() || !e.contains("path") || !e["path"].is_string()) continue;
    OutputEntry o;
    o.path = e["path"].get<std::string>();
    o.kind = e.value("kind", "");
    o.split = e.value("split", "");
    o.side = e.value("side", "");
    o.records = e.value("records", uint64_t{0});
    o.size = e.value("size", uint64_t{0});
    o.checksum = std::stoull(e.value("xxh3_64", std::string("0")), nullptr, 16);
    out.push_back(std::move(o));
  }
  return out;
}

}  // namespace sheaf
