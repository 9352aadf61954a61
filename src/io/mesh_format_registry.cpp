#include "io/mesh_format_registry.h"

#include <algorithm>

namespace polystokes {

void read_obj(const std::string& path, std::string_view bytes, PolygonSoup& soup);
void read_off(const std::string& path, std::string_view bytes, PolygonSoup& soup);
void read_ply(const std::string& path, std::string_view bytes, PolygonSoup& soup);
void read_stl(const std::string& path, std::string_view bytes, PolygonSoup& soup);
void read_vertex_facet(const std::string& path, std::string_view bytes, PolygonSoup& soup);

const std::vector<MeshFormatEntry>& mesh_format_table() {
  static const std::vector<MeshFormatEntry> table = {
      {"obj", "obj", "Wavefront OBJ (v and f records)", read_obj},
      {"off", "off", "OFF, ascii or binary", read_off},
      {"ply", "ply", "PLY, ascii or binary little/big endian", read_ply},
      {"stl", "stl", "STL, ascii or binary", read_stl},
      {"vertex-facet", "",
       "a line 'V F', V vertex lines 'x y z', F facet lines 'i j k' (1-based), each optionally after an "
       "index "
       "column",
       read_vertex_facet},
  };
  return table;
}

void PolygonSoup::reserve(std::int64_t vertices, std::int64_t polygons, size_t bytes, double bytes_per_vertex,
                          double bytes_per_polygon) {
  const double room = static_cast<double>(bytes);
  const auto cap = [&](std::int64_t count, double per) {
    return static_cast<size_t>(std::max(0.0, std::min(static_cast<double>(count), room / per)));
  };
  coordinates.reserve(3 * cap(vertices, bytes_per_vertex));
  corners.reserve(3 * cap(polygons, bytes_per_polygon));
  offsets.reserve(cap(polygons, bytes_per_polygon) + 1);
}

double mesh_read_bytes(double file_size, double vertices, double faces) {
  return file_size + 200.0 * vertices + 250.0 * faces;
}

}  // namespace polystokes
