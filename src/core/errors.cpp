#include "polystokes/core/errors.h"

namespace polystokes {

FormatError format_error(const std::string& file, long line, const std::string& problem) {
  if (line > 0) return FormatError(file + ":" + std::to_string(line) + ": " + problem);
  return FormatError(file + ": " + problem);
}

MeshError mesh_error(const std::string& file, const std::string& problem) {
  return MeshError(file + ": " + problem);
}

}  // namespace polystokes
