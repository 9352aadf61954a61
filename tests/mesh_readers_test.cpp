// The mesh readers (src/io/mesh_formats/*.cpp): every ordinary variant of the formats reads to the same mesh,
// lying counts and malformed records are refused with one-line errors, and the bare vertex-facet layout reads
// to the same mesh as OBJ. Record layouts: OFF as in the Geomview manual ("OFF files", Geomview 1.9
// documentation, from memory; the binary form stores big-endian 32-bit counts and floats), PLY as in G. Turk,
// "The PLY Polygon File Format" (1994), binary STL as in the 3D Systems StereoLithography Interface
// Specification (1989): an 80-byte header, a 32-bit facet count and 50 bytes per facet.
#include <Eigen/Geometry>
#include <catch2/catch.hpp>
#include <cmath>
#include <cstdint>
#include <cstring>

#include "io/mesh_format_registry.h"
#include "polystokes/core/errors.h"
#include "polystokes/io/mesh_io.h"
#include "test_support.h"

using namespace polystokes;
using namespace polystokes::test;

namespace {

// The regular octahedron with vertices at distance 1 on the axes, faces outward: volume 4/3 (elementary).
const double octahedron_vertices[6][3] = {{1, 0, 0},  {-1, 0, 0}, {0, 1, 0},
                                          {0, -1, 0}, {0, 0, 1},  {0, 0, -1}};
const int octahedron_faces[8][3] = {{0, 2, 4}, {2, 1, 4}, {1, 3, 4}, {3, 0, 4},
                                    {2, 0, 5}, {1, 2, 5}, {3, 1, 5}, {0, 3, 5}};

std::string write_file(const std::string& name, const std::string& bytes) {
  const std::string path = temp_directory() + "/" + name;
  write_text(path, bytes);
  return path;
}

void require_octahedron(const Mesh& mesh) {
  REQUIRE(mesh.vertices.rows() == 6);
  REQUIRE(mesh.faces.rows() == 8);
  for (int v = 0; v < 6; ++v)
    for (int k = 0; k < 3; ++k) CHECK(mesh.vertices(v, k) == octahedron_vertices[v][k]);
  for (int f = 0; f < 8; ++f)
    for (int k = 0; k < 3; ++k) CHECK(mesh.faces(f, k) == octahedron_faces[f][k]);
}

std::string off_ascii(const std::string& keyword, const std::string& vertex_suffix,
                      const std::string& face_suffix) {
  std::string text = keyword + "\n# an octahedron\n6 8 0\n";
  for (const auto& v : octahedron_vertices)
    text += std::to_string(int(v[0])) + " " + std::to_string(int(v[1])) + " " + std::to_string(int(v[2])) +
            vertex_suffix + "\n";
  for (const auto& f : octahedron_faces)
    text += "3 " + std::to_string(f[0]) + " " + std::to_string(f[1]) + " " + std::to_string(f[2]) +
            face_suffix + "\n";
  return text;
}

void put_big_endian(std::string& out, std::uint32_t bits) {
  for (int shift = 24; shift >= 0; shift -= 8) out += static_cast<char>((bits >> shift) & 0xff);
}

std::string off_binary() {
  std::string out = "OFF BINARY\n";
  put_big_endian(out, 6);
  put_big_endian(out, 8);
  put_big_endian(out, 0);
  for (const auto& v : octahedron_vertices)
    for (double x : v) {
      const float f = static_cast<float>(x);
      std::uint32_t bits;
      std::memcpy(&bits, &f, 4);
      put_big_endian(out, bits);
    }
  for (const auto& f : octahedron_faces) {
    put_big_endian(out, 3);
    for (int i : f) put_big_endian(out, static_cast<std::uint32_t>(i));
  }
  return out;
}

std::string ply_header(const std::string& format, const std::string& vertex_properties,
                       const std::string& list) {
  return "ply\nformat " + format + " 1.0\ncomment octahedron\nelement vertex 6\n" + vertex_properties +
         "element face 8\nproperty list " + list + " vertex_indices\nend_header\n";
}

std::string ply_binary_little_endian_doubles() {
  std::string out = ply_header("binary_little_endian",
                               "property double x\nproperty double y\nproperty double z\n", "uchar int");
  for (const auto& v : octahedron_vertices) out.append(reinterpret_cast<const char*>(v), 3 * sizeof(double));
  for (const auto& f : octahedron_faces) {
    out += static_cast<char>(3);
    out.append(reinterpret_cast<const char*>(f), 3 * sizeof(int));
  }
  return out;
}

}  // namespace

TEST_CASE("ordinary OFF variants still read to the same octahedron", "[mesh_readers]") {
  require_octahedron(read_mesh(write_file("plain.off", off_ascii("OFF", "", ""))));
  // Counts on the keyword line, and trailing numbers (a colour the plain variant ignores) after the indices.
  std::string same_line = off_ascii("OFF", "", " 255 0 0");
  same_line.replace(same_line.find("\n# an octahedron\n6 8 0"), 22, " 6 8 0");
  require_octahedron(read_mesh(write_file("same_line.off", same_line)));
  // NOFF: a normal after each vertex; 4OFF: a homogeneous coordinate 1.
  require_octahedron(read_mesh(write_file("normals.off", off_ascii("NOFF", " 0 0 1", ""))));
  require_octahedron(read_mesh(write_file("homogeneous.off", off_ascii("4OFF", " 1", ""))));
  require_octahedron(read_mesh(write_file("binary.off", off_binary())));
}

TEST_CASE("ordinary PLY variants still read to the same octahedron", "[mesh_readers]") {
  std::string ascii = ply_header("ascii",
                                 "property float x\nproperty float y\nproperty float z\nproperty uchar red\n"
                                 "property uchar green\nproperty uchar blue\n",
                                 "uchar int");
  for (const auto& v : octahedron_vertices)
    ascii += std::to_string(int(v[0])) + " " + std::to_string(int(v[1])) + " " + std::to_string(int(v[2])) +
             " 200 100 0\n";
  for (const auto& f : octahedron_faces)
    ascii += "3 " + std::to_string(f[0]) + " " + std::to_string(f[1]) + " " + std::to_string(f[2]) + "\n";
  require_octahedron(read_mesh(write_file("colours.ply", ascii)));
  require_octahedron(read_mesh(write_file("doubles.ply", ply_binary_little_endian_doubles())));
}

TEST_CASE("lying or malformed records are refused with a FormatError naming file and problem",
          "[mesh_readers]") {
  auto refused = [](const std::string& name, const std::string& bytes, const std::string& expected) {
    const std::string path = write_file(name, bytes);
    CAPTURE(name, expected);
    try {
      read_mesh(path);
      FAIL("accepted");
    } catch (const FormatError& error) {
      const std::string message = error.what();
      CAPTURE(message);
      CHECK(message.find(path) != std::string::npos);
      CHECK(message.find(expected) != std::string::npos);
    }
  };
  refused("short.off", "OFF\n3 2000000 0\n0 0 0\n", "2000000 faces");
  refused("index.off", "OFF\n3 1 0\n0 0 0\n1 0 0\n0 1 0\n3 0 1 1.5\n",
          "vertex index 1.5 is not a whole number");
  refused("fraction.off", "OFF\n3 1 0\n0 0 0\n1 0 0\n0 1 0\n2.5 0 1 2\n", "declares 2.5 vertices");
  refused("texture.off", "STOFF\n3 1 0\n0 0 0\n1 0 0\n0 1 0\n3 0 1 2\n", "'STOFF'");
  refused("binary_normals.off", "NOFF BINARY\n" + std::string(12, '\0'), "binary OFF variant 'NOFF'");
  refused("count.ply", "ply\nformat ascii 1.0\nelement vertex -3\nend_header\n", "count '-3'");
  refused(
      "huge.ply",
      "ply\nformat ascii 1.0\nelement vertex 100000\nproperty float x\nproperty float y\nproperty float z\n"
      "end_header\n0 0 0\n",
      "100000 vertices");
  refused("colour.ply",
          "ply\nformat ascii 1.0\nelement vertex 1\nproperty float x\nproperty float y\nproperty float z\n"
          "property float red\nend_header\n0 0 0 0.5\n",
          "property 'red' of element 'vertex' has type float; the reader needs uchar");
  refused("list.ply",
          "ply\nformat ascii 1.0\nelement face 1\nproperty list uchar int vertex_indices\nend_header\n300 1 "
          "2 3\n",
          "list length 300");
}

TEST_CASE("reading-memory estimates grow with the counts", "[mesh_readers]") {
  CHECK(mesh_read_bytes(1000, 10, 16) < mesh_read_bytes(1000, 5e6, 1e7));
  // At least the mesh itself: 24 bytes per vertex and 12 per face (three doubles, three ints).
  CHECK(mesh_read_bytes(0, 5e6, 1e7) >= 24.0 * 5e6 + 12.0 * 1e7);
  CHECK(mesh_read_bytes(2000, 0, 0) >= 2000);
}

namespace {

// The octahedron in the bare vertex-facet layout: counts, vertex lines, 1-based facet lines; optionally a
// leading index column in either block.
std::string vertex_facet(bool vertex_index, bool facet_index) {
  std::string text = "6 8\n";
  for (int v = 0; v < 6; ++v) {
    if (vertex_index) text += std::to_string(v + 1) + " ";
    const auto& p = octahedron_vertices[v];
    text +=
        std::to_string(int(p[0])) + " " + std::to_string(int(p[1])) + " " + std::to_string(int(p[2])) + "\n";
  }
  for (int f = 0; f < 8; ++f) {
    if (facet_index) text += "  " + std::to_string(f + 1) + "\t";
    const auto& t = octahedron_faces[f];
    text += std::to_string(t[0] + 1) + " " + std::to_string(t[1] + 1) + " " + std::to_string(t[2] + 1) + "\n";
  }
  return text;
}

std::string obj_octahedron() {
  std::string text;
  for (const auto& p : octahedron_vertices)
    text += "v " + std::to_string(int(p[0])) + " " + std::to_string(int(p[1])) + " " +
            std::to_string(int(p[2])) + "\n";
  for (const auto& t : octahedron_faces)
    text += "f " + std::to_string(t[0] + 1) + " " + std::to_string(t[1] + 1) + " " +
            std::to_string(t[2] + 1) + "\n";
  return text;
}

MeshReadOptions as_vertex_facet() {
  MeshReadOptions options;
  options.format = "vertex-facet";
  return options;
}

void require_error(const std::string& name, const std::string& bytes, const std::string& expected) {
  const std::string path = write_file(name, bytes);
  CAPTURE(name, expected);
  try {
    read_mesh(path, as_vertex_facet());
    FAIL("accepted");
  } catch (const FormatError& error) {
    const std::string message = error.what();
    CAPTURE(message);
    CHECK(message.find('\n') == std::string::npos);
    CHECK(message.find(path + ":") == 0);
    CHECK(message.find(expected) != std::string::npos);
  }
}

}  // namespace

TEST_CASE("vertex-facet layout, with and without index columns, reads to the same mesh as the OBJ",
          "[mesh_readers]") {
  const Mesh obj = read_mesh(write_file("octahedron.obj", obj_octahedron()));
  require_octahedron(obj);
  for (bool vertex_index : {false, true})
    for (bool facet_index : {false, true}) {
      CAPTURE(vertex_index, facet_index);
      const Mesh mesh =
          read_mesh(write_file("octahedron.tab", vertex_facet(vertex_index, facet_index)), as_vertex_facet());
      CHECK(mesh.vertices == obj.vertices);
      CHECK(mesh.faces == obj.faces);
      CHECK(mesh.format == "vertex-facet");
      CHECK(mesh.notices.empty());
    }
  CHECK(obj.format == "obj");
}

TEST_CASE("vertex-facet volumes: regular octahedron sqrt(2)/3 a^3, unit cube 1 (elementary geometry)",
          "[mesh_readers]") {
  // Vertices at distance 1 on the axes: edge a = sqrt(2), so V = sqrt(2)/3 * 2 sqrt(2) = 4/3.
  const Mesh octahedron =
      read_mesh(write_file("octahedron.dat", vertex_facet(true, false)), as_vertex_facet());
  CHECK(volume_of(octahedron) == Approx(std::sqrt(2.0) / 3.0 * std::pow(std::sqrt(2.0), 3)).epsilon(1e-15));
  // The unit cube [0,1]^3 as 12 outward triangles, with 1e3 as the unit: volume (1 km)^3 = 1e9 m^3.
  const std::string cube =
      "8 12\n0 0 0\n1 0 0\n0 1 0\n1 1 0\n0 0 1\n1 0 1\n0 1 1\n1 1 1\n"
      "1 3 4\n1 4 2\n5 6 8\n5 8 7\n1 2 6\n1 6 5\n3 7 8\n3 8 4\n1 5 7\n1 7 3\n2 4 8\n2 8 6\n";
  MeshReadOptions km = as_vertex_facet();
  km.unit = LengthUnit::kilometer;
  CHECK(volume_of(read_mesh(write_file("cube.txt", cube), km)) == Approx(1e9).epsilon(1e-15));
}

TEST_CASE("malformed vertex-facet files give one-line errors with the line number", "[mesh_readers]") {
  const std::string good = vertex_facet(false, false);
  require_error("short.txt", "6 9\n" + good.substr(4), ":15: the file ends after 8 of the 9 facet lines");
  require_error("few_vertices.txt", "7 8\n0 0 0\n", ":2: the file ends after 1 of the 7 vertex lines");
  std::string out_of_range = good;
  out_of_range.replace(out_of_range.rfind("\n1 "), 3, "\n7 ");
  require_error("range.txt", out_of_range, ":15: facet 8 refers to vertex 7, but the file has 6 vertices");
  std::string zero_based = good;
  zero_based.replace(zero_based.find("\n1 3 5"), 6, "\n0 2 4");
  require_error("zero.txt", zero_based, ":8: facet 1: vertex number 0, but vertices are numbered from 1");
  std::string extra = good;
  extra.replace(extra.find("\n1 3 5\n"), 7, "\n1 3 5 2 4\n");
  require_error("extra.txt", extra,
                ":8: the first facet line has 5 fields; expected 3 (or 4 with a leading index)");
  std::string mixed = vertex_facet(true, false);
  mixed.replace(mixed.find("\n2 -1 0 0"), 9, "\n-1 0 0");
  require_error("mixed.txt", mixed, ":3: vertex 2 has 3 fields, but the block's first line has 4");
  std::string misnumbered = vertex_facet(false, true);
  misnumbered.replace(misnumbered.find("  3\t"), 4, "  4\t");
  require_error("numbering.txt", misnumbered, ":10: facet line 3 starts with index '4'");
  require_error("trailing.txt", good + "1 2 3\n", ":16: extra text after the 8 facets");
  require_error("counts.txt", "6 8 0\n" + good.substr(4),
                ":1: extra text '0' after the vertex and facet counts");
  require_error("nan.txt", "1 1\nnan 0 0\n1 1 1\n", ":2: vertex coordinate 'nan' is not a number");
}

TEST_CASE("a format only --format can name is refused by extension, naming the formats", "[mesh_readers]") {
  const std::string path = write_file("body.tab", vertex_facet(false, false));
  try {
    read_mesh(path);
    FAIL("accepted");
  } catch (const MeshError& error) {
    const std::string message = error.what();
    CHECK(
        message ==
        path +
            ": unknown mesh format '.tab': give the format with --format (obj, off, ply, stl, vertex-facet)");
  }
  MeshReadOptions unknown;
  unknown.format = "xyz";
  REQUIRE_THROWS_AS(read_mesh(path, unknown), ConventionError);
  // An explicit format overrides the extension.
  MeshReadOptions obj;
  obj.format = "obj";
  require_octahedron(read_mesh(write_file("octahedron.txt", obj_octahedron()), obj));
}

TEST_CASE("PLY binary big endian reads to the same octahedron; ascii STL to an octahedron of volume 4/3",
          "[mesh_readers]") {
  // Bourke, "PLY - Polygon File Format": binary_big_endian stores every value most significant byte first.
  std::string big =
      ply_header("binary_big_endian", "property float x\nproperty float y\nproperty float z\n", "uchar uint");
  for (const auto& v : octahedron_vertices)
    for (double x : v) {
      const float f = static_cast<float>(x);
      std::uint32_t bits;
      std::memcpy(&bits, &f, 4);
      put_big_endian(big, bits);
    }
  for (const auto& f : octahedron_faces) {
    big += static_cast<char>(3);
    for (int i : f) put_big_endian(big, static_cast<std::uint32_t>(i));
  }
  require_octahedron(read_mesh(write_file("big.ply", big)));

  // 3D Systems (1989): facet normal, outer loop, three vertices; the 24 records weld into 6 vertices.
  std::string stl = "solid octahedron\n";
  for (const auto& f : octahedron_faces) {
    stl += "facet normal 0 0 0\nouter loop\n";
    for (int i : f)
      stl += "vertex " + std::to_string(int(octahedron_vertices[i][0])) + " " +
             std::to_string(int(octahedron_vertices[i][1])) + " " +
             std::to_string(int(octahedron_vertices[i][2])) + "\n";
    stl += "endloop\nendfacet\n";
  }
  // STL has no vertex list: the welded vertices come in the order the facets first use them.
  const Mesh welded = read_mesh(write_file("octahedron.stl", stl + "endsolid octahedron\n"));
  CHECK(welded.vertices.rows() == 6);
  CHECK(welded.faces.rows() == 8);
  CHECK(volume_of(welded) == Approx(4.0 / 3.0).epsilon(1e-15));  // elementary geometry, as above
}
