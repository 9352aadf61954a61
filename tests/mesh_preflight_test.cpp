// Checks before mesh parsing: declared counts, refusals of records the CGAL readers would mishandle, and that
// every ordinary variant of the formats still reads to the same mesh.
// Record layouts: OFF as in the Geomview manual ("OFF files", Geomview 1.9 documentation, from memory; the
// binary form stores big-endian 32-bit counts and floats), PLY as in G. Turk, "The PLY Polygon File Format"
// (1994), binary STL as in the 3D Systems StereoLithography Interface Specification (1989): an 80-byte
// header, a 32-bit facet count and 50 bytes per facet.
#include <catch2/catch.hpp>
#include <cstdint>
#include <cstring>

#include "polystokes/core/errors.h"
#include "polystokes/io/mesh_io.h"
#include "io/mesh_preflight.h"
#include "test_support.h"

using namespace polystokes;
using namespace polystokes::test;

namespace {

// The regular octahedron with vertices at distance 1 on the axes, faces outward: volume 4/3 (elementary).
const double octahedron_vertices[6][3] = {{1, 0, 0}, {-1, 0, 0}, {0, 1, 0}, {0, -1, 0}, {0, 0, 1}, {0, 0, -1}};
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

std::string off_ascii(const std::string& keyword, const std::string& vertex_suffix, const std::string& face_suffix) {
  std::string text = keyword + "\n# an octahedron\n6 8 0\n";
  for (const auto& v : octahedron_vertices)
    text += std::to_string(int(v[0])) + " " + std::to_string(int(v[1])) + " " + std::to_string(int(v[2])) +
            vertex_suffix + "\n";
  for (const auto& f : octahedron_faces)
    text += "3 " + std::to_string(f[0]) + " " + std::to_string(f[1]) + " " + std::to_string(f[2]) + face_suffix + "\n";
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

std::string ply_header(const std::string& format, const std::string& vertex_properties, const std::string& list) {
  return "ply\nformat " + format + " 1.0\ncomment octahedron\nelement vertex 6\n" + vertex_properties +
         "element face 8\nproperty list " + list + " vertex_indices\nend_header\n";
}

std::string ply_binary_little_endian_doubles() {
  std::string out = ply_header("binary_little_endian", "property double x\nproperty double y\nproperty double z\n",
                               "uchar int");
  for (const auto& v : octahedron_vertices) out.append(reinterpret_cast<const char*>(v), 3 * sizeof(double));
  for (const auto& f : octahedron_faces) {
    out += static_cast<char>(3);
    out.append(reinterpret_cast<const char*>(f), 3 * sizeof(int));
  }
  return out;
}

}  // namespace

TEST_CASE("ordinary OFF variants still read to the same octahedron", "[mesh_preflight]") {
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

TEST_CASE("ordinary PLY variants still read to the same octahedron", "[mesh_preflight]") {
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

TEST_CASE("declared counts are read from headers and records", "[mesh_preflight]") {
  const MeshFileCounts off = mesh_file_counts(off_ascii("OFF", "", ""), ".off");
  CHECK(off.vertices == 6);
  CHECK(off.faces == 8);
  CHECK(off.minimum_bytes > 0);
  CHECK(off.minimum_bytes <= double(off_ascii("OFF", "", "").size()));

  const MeshFileCounts binary_off = mesh_file_counts(off_binary(), ".off");
  CHECK(binary_off.vertices == 6);
  CHECK(binary_off.faces == 8);
  // Header, 6 x 12 bytes of coordinates and 8 x 4-byte counts at least; the file also holds the indices.
  CHECK(binary_off.minimum_bytes == Approx(11 + 12 + 72 + 32 - 1));

  const MeshFileCounts ply = mesh_file_counts(ply_binary_little_endian_doubles(), ".ply");
  CHECK(ply.vertices == 6);
  CHECK(ply.faces == 8);

  std::string stl(80, ' ');
  const std::uint32_t facets = 2;
  stl.append(reinterpret_cast<const char*>(&facets), 4);
  stl.append(100, '\0');
  const MeshFileCounts binary_stl = mesh_file_counts(stl, ".stl");
  CHECK(binary_stl.faces == 2);
  CHECK(binary_stl.vertices == 6);

  const MeshFileCounts obj = mesh_file_counts("v 0 0 0\nv 1 0 0\n  v 0 1 0\nvn 0 0 1\nf 1 2 3\nfoo\n", ".obj");
  CHECK(obj.vertices == 3);
  CHECK(obj.faces == 1);
}

TEST_CASE("lying or malformed records are refused with a FormatError naming file and problem", "[mesh_preflight]") {
  auto refused = [](const std::string& name, const std::string& bytes, const std::string& expected) {
    const std::string path = write_file(name, bytes);
    CAPTURE(name, expected);
    try {
      check_mesh_file(path, bytes, name.substr(name.rfind('.')));
      FAIL("accepted");
    } catch (const FormatError& error) {
      const std::string message = error.what();
      CAPTURE(message);
      CHECK(message.find(path) != std::string::npos);
      CHECK(message.find(expected) != std::string::npos);
    }
  };
  refused("short.off", "OFF\n3 2000000 0\n0 0 0\n", "2000000 faces");
  refused("index.off", "OFF\n3 1 0\n0 0 0\n1 0 0\n0 1 0\n3 0 1 1.5\n", "vertex index 1.5 is not a whole number");
  refused("fraction.off", "OFF\n3 1 0\n0 0 0\n1 0 0\n0 1 0\n2.5 0 1 2\n", "declares 2.5 vertices");
  refused("texture.off", "STOFF\n3 1 0\n0 0 0\n1 0 0\n0 1 0\n3 0 1 2\n", "'STOFF'");
  refused("binary_normals.off", "NOFF BINARY\n" + std::string(12, '\0'), "binary OFF variant 'NOFF'");
  refused("count.ply", "ply\nformat ascii 1.0\nelement vertex -3\nend_header\n", "count '-3'");
  refused("huge.ply",
          "ply\nformat ascii 1.0\nelement vertex 100000\nproperty float x\nproperty float y\nproperty float z\n"
          "end_header\n0 0 0\n",
          "100000 vertices");
  refused("colour.ply",
          "ply\nformat ascii 1.0\nelement vertex 1\nproperty float x\nproperty float y\nproperty float z\n"
          "property float red\nend_header\n0 0 0 0.5\n",
          "property 'red' of element 'vertex' has type float; the reader needs uchar");
  refused("list.ply",
          "ply\nformat ascii 1.0\nelement face 1\nproperty list uchar int vertex_indices\nend_header\n300 1 2 3\n",
          "list length 300");
}

TEST_CASE("reading-memory estimates grow with the declared counts", "[mesh_preflight]") {
  MeshFileCounts small, large;
  small.vertices = 10;
  small.faces = 16;
  large.vertices = 5'000'000;
  large.faces = 10'000'000;
  CHECK(mesh_read_bytes(1000, small) < mesh_read_bytes(1000, large));
  // At least the mesh itself: 24 bytes per vertex and 12 per face (three doubles, three ints).
  CHECK(mesh_read_bytes(0, large) >= 24.0 * 5e6 + 12.0 * 1e7);
  CHECK(mesh_read_bytes(2000, MeshFileCounts{}) >= 2000);
}
