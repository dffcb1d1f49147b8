#include "pipeline/run_dir.h"

#include <filesystem>
#include <fstream>
#include <set>

#include "io/output_file.h"
#include "report/run_record.h"

namespace fs = std::filesystem;

namespace sheaf {

namespace {

constexpr const char* kMarker = ".sheaf-run";

// True when `rel` names a path inside `dir` that does not pass through a
// symbolic link.
bool safe_inside(const fs::path& dir, const std::string& rel) {
  if (rel.empty() || rel.front() == '/') return false;
  fs::path p(rel);
  fs::path cur = dir;
  for (const auto& part : p) {
    if (part == ".." || part == ".") return false;
    std::error_code ec;
    if (cur != dir && fs::is_symlink(cur, ec)) return false;
    cur /= part;
  }
  return true;
}

}  // namespace

Result<RunDir> RunDir::prepare(const std::string& dir, bool force) {
  std::error_code ec;
  fs::path d(dir);
  if (fs::exists(d, ec) && !fs::is_directory(d, ec))
    return Error(ErrorKind::kUsage, "the output path exists and is not a directory; choose another --out",
                 Location{dir, 0, 0, {}});
  if (!fs::exists(d, ec)) {
    fs::create_directories(d, ec);
    if (ec) return Error(ErrorKind::kIo, "cannot create the output directory: " + ec.message(), Location{dir, 0, 0, {}});
  }
  bool empty = fs::is_empty(d, ec);
  bool previous = fs::exists(d / "manifest.json") || fs::exists(d / kMarker);
  if (!empty && !previous && !force)
    return Error(ErrorKind::kUsage,
                 "the output directory holds files that are not a sheaf run; choose an empty directory, or pass "
                 "--force to write into it (only files a previous sheaf run listed are ever removed)",
                 Location{dir, 0, 0, {}});
  std::set<std::string> listed;
  if (fs::exists(d / "manifest.json")) {
    auto outs = read_manifest_outputs((d / "manifest.json").string());
    if (outs.ok())
      for (const auto& o : *outs) listed.insert(o.path);
    listed.insert("manifest.json");
  }
  if (fs::exists(d / kMarker)) {
    std::ifstream in(d / kMarker);
    std::string line;
    std::getline(in, line);  // header
    while (std::getline(in, line))
      if (!line.empty()) listed.insert(line);
  }
  for (const auto& rel : listed) {
    if (!safe_inside(d, rel)) continue;
    for (const std::string& name : {rel, rel + ".partial"}) {
      fs::path p = d / name;
      if (fs::is_symlink(p, ec) || fs::is_regular_file(p, ec)) fs::remove(p, ec);
    }
  }
  RunDir r;
  r.dir_ = dir;
  std::ofstream marker(d / kMarker, std::ios::trunc);
  marker << "sheaf run directory: files this run creates follow\n";
  if (!marker) return Error(ErrorKind::kIo, "cannot write in the output directory", Location{dir, 0, 0, {}});
  return r;
}

Status RunDir::will_create(const std::string& rel) const {
  std::ofstream marker(fs::path(dir_) / kMarker, std::ios::app);
  marker << rel << "\n";
  marker.flush();
  if (!marker) return Error(ErrorKind::kIo, "cannot write in the output directory", Location{dir_, 0, 0, {}});
  std::error_code ec;
  fs::path parent = (fs::path(dir_) / rel).parent_path();
  fs::create_directories(parent, ec);
  return {};
}

Status write_output(const RunDir& dir, RunRecord& rec, OutputEntry entry, std::string_view bytes) {
  SHEAF_TRY(dir.will_create(entry.path));
  OutputFile f;
  SHEAF_TRY(f.open(dir.file(entry.path)));
  f.write(bytes);
  SHEAF_TRY(f.commit());
  entry.size = f.size();
  entry.checksum = f.checksum();
  rec.outputs.push_back(std::move(entry));
  return {};
}

}  // namespace sheaf
