// The mesh format registry: one reader per file format (src/io/mesh_formats/FORMAT.cpp), each turning a
// file's bytes into a polygon soup, and the one table that names them. Adding a format: a reader file and a
// table line.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

namespace polystokes {

/// Vertices and polygons exactly as a file states them, before welding and triangulation.
struct PolygonSoup {
  std::vector<double> coordinates;       ///< x, y, z of each vertex in the file's unit, file order
  std::vector<int> corners;              ///< zero-based vertex numbers of all polygons, one after another
  std::vector<std::int64_t> offsets{0};  ///< polygon p is corners[offsets[p], offsets[p + 1])

  std::int64_t vertex_count() const { return static_cast<std::int64_t>(coordinates.size() / 3); }
  std::int64_t polygon_count() const { return static_cast<std::int64_t>(offsets.size()) - 1; }
  void add_vertex(double x, double y, double z) {
    coordinates.push_back(x);
    coordinates.push_back(y);
    coordinates.push_back(z);
  }
  /// Closes the polygon whose corners were pushed since the last call.
  void end_polygon() { offsets.push_back(static_cast<std::int64_t>(corners.size())); }
  /// Reserves room for `vertices` and `polygons` (of three corners), each capped by what `bytes` more file
  /// bytes could hold at `bytes_per_vertex` and `bytes_per_polygon`: a header's count alone never sizes an
  /// allocation.
  void reserve(std::int64_t vertices, std::int64_t polygons, size_t bytes, double bytes_per_vertex,
               double bytes_per_polygon);
};

/// Reads the whole file `bytes` of `path` into `soup`. Every vertex index in the soup is checked to name a
/// vertex of the soup; coordinates may still be non-finite (binary formats) and polygons may have fewer than
/// three corners (read_mesh refuses both). Throws FormatError "path:LINE: problem" (or "path: problem" for
/// binary data) on anything malformed, MeshError where the content is not a surface mesh.
using MeshReaderFunction = void (*)(const std::string& path, std::string_view bytes, PolygonSoup& soup);

struct MeshFormatEntry {
  const char* name;         ///< for --format and echoes: "obj", "off", ...
  const char* extensions;   ///< lower-case extensions chosen by default, blank-separated; "" = --format only
  const char* description;  ///< one line for help texts
  MeshReaderFunction read;
};

/// The registered formats, in the order help texts list them.
const std::vector<MeshFormatEntry>& mesh_format_table();

/// Largest vertex count a soup may reach: face indices are 32-bit ints.
constexpr std::int64_t max_mesh_vertices = 2147483647;

/// Peak bytes of welding and checking a mesh of these counts read from a file of this size: the bytes, the
/// soup, welding tables, the mesh and the checks' search structures, taken as 200 bytes per vertex and 250
/// per face (measured: a one-million-face OBJ read and checked peaks at about 330 bytes per face in all).
double mesh_read_bytes(double file_size, double vertices, double faces);

}  // namespace polystokes
