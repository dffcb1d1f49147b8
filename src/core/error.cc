#include "core/error.h"

namespace sheaf {

std::string Error::describe() const {
  std::string out;
  if (!where_.file.empty()) {
    out += where_.file;
    if (where_.line > 0) {
      out += ':' + std::to_string(where_.line);
      if (where_.column > 0) out += ':' + std::to_string(where_.column);
    }
    out += ": ";
  } else if (where_.line > 0) {
    out += "line " + std::to_string(where_.line) + ": ";
  }
  out += message_;
  if (where_.byte_offset) out += " (byte " + std::to_string(*where_.byte_offset) + ")";
  return out;
}

int Error::exit_status() const {
  return (kind_ == ErrorKind::kUsage || kind_ == ErrorKind::kPipeline) ? 2 : 1;
}

}  // namespace sheaf
