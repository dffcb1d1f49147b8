#include "config/pipeline.h"

#include <filesystem>

namespace sheaf {

int Pipeline::stage_index(std::string_view name) const {
  for (size_t i = 0; i < stages.size(); ++i)
    if (stages[i].name == name) return static_cast<int>(i);
  return -1;
}

std::string Pipeline::origin(uint32_t corpus, uint64_t line) const {
  if (!named_corpora || corpus >= corpora.size()) return std::to_string(line);
  return corpora[corpus].name + ":" + std::to_string(line);
}

std::string Pipeline::resolve(const std::string& path) const {
  if (path == "-" || path.empty() || path.front() == '/') return path;
  return (std::filesystem::path(base_dir) / path).lexically_normal().string();
}

}  // namespace sheaf
