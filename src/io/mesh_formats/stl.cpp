// STL: binary (an 80-byte header, a little-endian 32-bit facet count, then 50 bytes a facet: normal, three
// vertices as float triples, a 16-bit attribute) or ascii ("solid NAME", then "facet normal nx ny nz",
// "outer loop", three "vertex x y z", "endloop", "endfacet", closed by "endsolid"). 3D Systems,
// "StereoLithography Interface Specification" (1989) (from memory). Every facet brings its own three vertex
// records, which read_mesh welds.
#include <fmt/format.h>

#include <cmath>
#include <cstring>

#include "io/mesh_format_registry.h"
#include "io/text_scanner.h"

namespace polystokes {
namespace {

constexpr size_t binary_header = 84, binary_facet = 50;

void add_triangle(PolygonSoup& soup) {
  const int first = static_cast<int>(soup.vertex_count()) - 3;
  for (int k = 0; k < 3; ++k) soup.corners.push_back(first + k);
  soup.end_polygon();
}

void read_binary(const std::string& path, std::string_view bytes, std::uint32_t facets, PolygonSoup& soup) {
  if (3 * static_cast<std::int64_t>(facets) > max_mesh_vertices)
    throw ResourceError(path + ": more vertices than a 32-bit face index can address");
  soup.reserve(3 * static_cast<std::int64_t>(facets), facets, bytes.size(), 16.0, 50.0);
  for (std::uint32_t f = 0; f < facets; ++f) {
    const char* record = bytes.data() + binary_header + binary_facet * static_cast<size_t>(f);
    float p[9];
    std::memcpy(p, record + 12, sizeof p);  // IEEE 754 little-endian floats, as on every host we build for
    for (float x : p)
      if (!std::isfinite(x))
        throw format_error(path, 0,
                           fmt::format("facet {} of {} has a non-finite vertex coordinate", f + 1, facets));
    for (int v = 0; v < 3; ++v) soup.add_vertex(p[3 * v], p[3 * v + 1], p[3 * v + 2]);
    add_triangle(soup);
  }
}

/// The next line's first token, which must be `word`; blank lines are skipped.
void expect_word(TextScanner& in, std::string_view word, std::string_view context) {
  std::string_view token;
  while (token.empty()) {
    if (!in.next_line()) in.fail(fmt::format("the file ends where '{}' should follow {}", word, context));
    token = in.token();
  }
  if (token != word) in.fail(fmt::format("expected '{}' after {}, found '{}'", word, context, token));
}

void read_ascii(const std::string& path, std::string_view bytes, PolygonSoup& soup) {
  TextScanner in(bytes, path);
  bool in_solid = false;
  while (in.next_line()) {
    const std::string_view word = in.token();
    if (word.empty()) continue;
    if (word == "solid" && !in_solid) {
      in_solid = true;
      continue;  // the rest of the line is the solid's name
    }
    if (word == "endsolid" && in_solid) {
      in_solid = false;
      continue;
    }
    if (word != "facet" || !in_solid)
      in.fail(fmt::format("expected '{}', found '{}'", in_solid ? "facet or endsolid" : "solid", word));
    if (in.token() != "normal") in.fail("expected 'facet normal nx ny nz'");
    for (int k = 0; k < 3; ++k) in.number("normal component");
    in.expect_line_end("the facet normal");
    expect_word(in, "outer", "'facet normal'");
    if (in.token() != "loop") in.fail("expected 'outer loop'");
    for (int v = 0; v < 3; ++v) {
      expect_word(in, "vertex", "'outer loop'");
      double p[3];
      for (double& x : p) x = in.number("vertex coordinate");
      in.expect_line_end("the vertex coordinates");
      soup.add_vertex(p[0], p[1], p[2]);
    }
    if (soup.vertex_count() > max_mesh_vertices)
      throw ResourceError(path + ": more vertices than a 32-bit face index can address");
    add_triangle(soup);
    expect_word(in, "endloop", "three vertices (STL facets are triangles)");
    expect_word(in, "endfacet", "'endloop'");
  }
  if (in_solid) in.fail("the file ends without 'endsolid'");
}

}  // namespace

void read_stl(const std::string& path, std::string_view bytes, PolygonSoup& soup) {
  // A binary file is recognised by its exact size (its header may well start with "solid" too).
  if (bytes.size() >= binary_header) {
    std::uint32_t facets = 0;
    std::memcpy(&facets, bytes.data() + 80, 4);
    if (bytes.size() == binary_header + binary_facet * static_cast<std::uint64_t>(facets)) {
      read_binary(path, bytes, facets, soup);
      return;
    }
  }
  size_t start = 0;
  while (start < bytes.size() && std::isspace(static_cast<unsigned char>(bytes[start]))) ++start;
  if (bytes.substr(start, 5) != "solid")
    throw format_error(
        path, 0,
        fmt::format("neither ascii STL (starting with 'solid') nor binary STL (84 bytes plus 50 a "
                    "facet; this file has {} bytes)",
                    bytes.size()));
  read_ascii(path, bytes, soup);
}

}  // namespace polystokes
