// The triangle mesh that every module works on: vertices in metres, faces as vertex triples.
// Produced by mesh_io (reading) and checked by mesh_check before any computation.
#pragma once

#include <Eigen/Core>
#include <string>
#include <vector>

namespace polystokes {

/// Length unit of a mesh file; vertices are converted to metres on import.
enum class LengthUnit { meter, kilometer };

/// "m" or "km".
std::string to_string(LengthUnit unit);
/// Parses "m" or "km"; throws ConventionError otherwise.
LengthUnit parse_length_unit(const std::string& text);
/// Metres per unit (1 or 1000).
double meters_per(LengthUnit unit);

using Vertices = Eigen::Matrix<double, Eigen::Dynamic, 3, Eigen::RowMajor>;
using Faces = Eigen::Matrix<int, Eigen::Dynamic, 3, Eigen::RowMajor>;

/// A closed triangle mesh. Faces are counter-clockwise seen from outside (outward normals).
struct Mesh {
  Vertices vertices;                 ///< #V x 3, metres, in the mesh file's frame
  Faces faces;                       ///< #F x 3, zero-based vertex indices
  std::string source;                ///< file name it was read from (or a label for generated meshes)
  LengthUnit unit = LengthUnit::meter;  ///< unit of the source file, echoed in outputs
  std::string checksum;              ///< SHA-256 (hex) of the source file bytes, empty for generated meshes
  std::string format;                ///< file format it was read as ("obj", "off", ...), empty if generated
  std::vector<std::string> notices;  ///< what import and checks changed (merged vertices, flipped orientation)
};

}  // namespace polystokes
