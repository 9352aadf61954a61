#include "polystokes/io/mesh_io.h"

#include <fmt/format.h>

#include <Eigen/Geometry>
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <random>

#include "polystokes/core/errors.h"
#include "polystokes/mesh/mesh_check.h"
#include "polystokes/mesh/shapes.h"
#include "test_support.h"

using namespace polystokes;
using polystokes::test::read_bytes;
using polystokes::test::source_path;
using polystokes::test::temp_directory;
using polystokes::test::volume_of;
using polystokes::test::write_text;

namespace {

// Unit cube [0,1]^3, corner i at (i&1, i&2, i&4), six outward quads (zero-based).
const double kCube[8][3] = {{0, 0, 0}, {1, 0, 0}, {0, 1, 0}, {1, 1, 0},
                            {0, 0, 1}, {1, 0, 1}, {0, 1, 1}, {1, 1, 1}};
const int kCubeQuads[6][4] = {{0, 2, 3, 1}, {4, 5, 7, 6}, {0, 1, 5, 4},
                              {2, 6, 7, 3}, {0, 4, 6, 2}, {1, 3, 7, 5}};

std::string cube_off() {
  std::string text = "OFF\n8 6 0\n";
  for (const auto& p : kCube) text += fmt::format("{} {} {}\n", p[0], p[1], p[2]);
  for (const auto& q : kCubeQuads) text += fmt::format("4 {} {} {} {}\n", q[0], q[1], q[2], q[3]);
  return text;
}

std::string ply_header(const std::string& format) {
  return "ply\nformat " + format +
         " 1.0\nelement vertex 8\nproperty double x\nproperty double y\nproperty double z\n"
         "element face 6\nproperty list uchar int vertex_indices\nend_header\n";
}

/// The cube's 12 triangles as an STL soup: every facet repeats its three corners (36 vertex records).
std::vector<std::array<int, 3>> cube_triangles() {
  std::vector<std::array<int, 3>> triangles;
  for (const auto& q : kCubeQuads) {
    triangles.push_back({q[0], q[1], q[2]});
    triangles.push_back({q[0], q[2], q[3]});
  }
  return triangles;
}

std::string cube_ascii_stl(double jitter = 0) {
  std::string text = "solid cube\n";
  int record = 0;
  for (const auto& t : cube_triangles()) {
    text += "  facet normal 0 0 0\n    outer loop\n";
    for (int v : t) {
      const double shift = jitter * ((record++ % 3) - 1);  // -jitter, 0, +jitter in turn
      text += fmt::format("      vertex {} {} {}\n", kCube[v][0] + shift, kCube[v][1], kCube[v][2]);
    }
    text += "    endloop\n  endfacet\n";
  }
  return text + "endsolid cube\n";
}

template <class T>
void append_binary(std::string& bytes, T value) {
  char raw[sizeof(T)];
  std::memcpy(raw, &value, sizeof(T));
  bytes.append(raw, sizeof(T));
}

std::string cube_binary_stl(float poison = 0) {
  std::string bytes(80, ' ');
  const auto triangles = cube_triangles();
  append_binary<std::uint32_t>(bytes, static_cast<std::uint32_t>(triangles.size()));
  bool first = true;
  for (const auto& t : triangles) {
    for (int k = 0; k < 3; ++k) append_binary<float>(bytes, 0.0f);
    for (int v : t)
      for (int k = 0; k < 3; ++k) {
        append_binary<float>(bytes, first && poison != 0 ? poison : static_cast<float>(kCube[v][k]));
        first = false;
      }
    append_binary<std::uint16_t>(bytes, 0);
  }
  return bytes;
}

template <class Error, class F>
std::string message_of(F&& action) {
  try {
    action();
  } catch (const Error& e) {
    return e.what();
  }
  FAIL("no error thrown");
  return {};
}

void require_one_line_naming(const std::string& message, const std::string& file,
                             const std::string& problem) {
  CAPTURE(message);
  REQUIRE(message.find('\n') == std::string::npos);
  REQUIRE(message.find(file) != std::string::npos);
  REQUIRE(message.find(problem) != std::string::npos);
}

bool has_notice(const Mesh& mesh, const std::string& text) {
  for (const auto& notice : mesh.notices)
    if (notice.find(text) != std::string::npos) return true;
  return false;
}

}  // namespace

TEST_CASE("write_obj then read_mesh returns the identical doubles (shortest round-trip form, fmt docs)",
          "[mesh_io]") {
  const Mesh original = make_ellipsoid(3, 1234.5678, 901.2345, 678.9);
  const std::string path = temp_directory() + "/ellipsoid.obj";
  write_obj(original, path, LengthUnit::meter);
  const Mesh back = read_mesh(path, {});
  REQUIRE(back.vertices.rows() == original.vertices.rows());
  REQUIRE(back.faces == original.faces);
  for (Eigen::Index i = 0; i < original.vertices.rows(); ++i)
    for (int k = 0; k < 3; ++k) {
      CAPTURE(i, k);
      REQUIRE(back.vertices(i, k) == original.vertices(i, k));
    }
  REQUIRE(back.notices.empty());
  REQUIRE(back.source == path);
  REQUIRE(back.unit == LengthUnit::meter);
  REQUIRE(back.checksum == sha256_file_hex(path));
}

TEST_CASE("OBJ coordinates equal the C library's correctly rounded strtod (ISO C 7.22.1.3) bit for bit",
          "[mesh_io]") {
  // Random doubles over many magnitudes, printed in shortest form; a parser that is not correctly rounded
  // (tinyobjloader's, used before, missed about half of these by an ulp) fails this.
  std::mt19937_64 random(20240611);
  std::uniform_real_distribution<double> mantissa(-1, 1);
  std::uniform_int_distribution<int> exponent(-30, 30);
  std::vector<std::string> tokens;
  std::string text;
  for (int i = 0; i < 300; ++i) {
    text += "v";
    for (int k = 0; k < 3; ++k) {
      tokens.push_back(fmt::format("{}", std::ldexp(mantissa(random), exponent(random))));
      text += " " + tokens.back();
    }
    text += "\n";
  }
  for (int i = 0; i + 2 < 300; i += 3) text += fmt::format("f {} {} {}\n", i + 1, i + 2, i + 3);
  text += "v +1.5 -0.0 1e-310\nf 301 300 299\n";
  tokens.insert(tokens.end(), {"+1.5", "-0.0", "1e-310"});
  const std::string path = temp_directory() + "/digits.obj";
  write_text(path, text);
  const Mesh mesh = read_mesh(path, {});
  REQUIRE(mesh.vertices.rows() == 301);
  for (size_t n = 0; n < tokens.size(); ++n) {
    CAPTURE(tokens[n]);
    REQUIRE(mesh.vertices(static_cast<Eigen::Index>(n / 3), static_cast<int>(n % 3)) ==
            std::strtod(tokens[n].c_str(), nullptr));
  }
}

TEST_CASE("km unit: vertices are read as 1000 m per unit and written back divided by 1000 (SI)",
          "[mesh_io]") {
  const std::string dir = temp_directory();
  write_text(dir + "/body.obj",
             "v 1.5 -2.25 0.125\nv 3 0 0\nv 0 3 0\nv 0 0 3\nf 1 3 2\nf 1 2 4\nf 1 4 3\nf 2 3 4\n");
  MeshReadOptions km;
  km.unit = LengthUnit::kilometer;
  const Mesh mesh = read_mesh(dir + "/body.obj", km);
  REQUIRE(mesh.unit == LengthUnit::kilometer);
  REQUIRE(mesh.vertices(0, 0) == 1500.0);
  REQUIRE(mesh.vertices(0, 1) == -2250.0);
  REQUIRE(mesh.vertices(0, 2) == 125.0);
  REQUIRE(mesh.vertices(3, 2) == 3000.0);

  write_obj(mesh, dir + "/again.obj", LengthUnit::kilometer);
  const std::string text = read_bytes(dir + "/again.obj");
  REQUIRE(text.find("\nv 1.5 -2.25 0.125\n") != std::string::npos);
  REQUIRE(text.find("\nf 1 3 2\n") != std::string::npos);
  const Mesh again = read_mesh(dir + "/again.obj", km);
  REQUIRE(again.vertices == mesh.vertices);
}

TEST_CASE("OFF cube of quads reads as 12 triangles enclosing volume 1 (elementary geometry)", "[mesh_io]") {
  const std::string path = temp_directory() + "/CUBE.Off";  // extension matched case-insensitively
  write_text(path, cube_off());
  Mesh mesh = read_mesh(path, {});
  REQUIRE(mesh.vertices.rows() == 8);
  REQUIRE(mesh.faces.rows() == 12);
  REQUIRE(volume_of(mesh) == Approx(1.0).margin(1e-15));
  REQUIRE(has_notice(mesh, "split 6 polygons into triangles"));
  const MeshCheckReport report = validate_mesh(mesh);
  REQUIRE_FALSE(report.flipped);
}

TEST_CASE(
    "OBJ cube of quads with v//vn and negative indices reads as 12 triangles, volume 1 (elementary geometry)",
    "[mesh_io]") {
  std::string text = "# unit cube\nvn 0 0 1\n";
  for (const auto& p : kCube) text += fmt::format("v {} {} {}\n", p[0], p[1], p[2]);
  for (int q = 0; q < 6; ++q) {
    const auto& f = kCubeQuads[q];
    if (q % 2 == 0)
      text += fmt::format("f {}//1 {}//1 {}//1 {}//1\n", f[0] + 1, f[1] + 1, f[2] + 1, f[3] + 1);
    else
      text += fmt::format("f {} {} {} {}\n", f[0] - 8, f[1] - 8, f[2] - 8,
                          f[3] - 8);  // relative to the 8 vertices
  }
  const std::string path = temp_directory() + "/cube.OBJ";
  write_text(path, text);
  Mesh mesh = read_mesh(path, {});
  REQUIRE(mesh.vertices.rows() == 8);
  REQUIRE(mesh.faces.rows() == 12);
  REQUIRE(volume_of(mesh) == Approx(1.0).margin(1e-15));
  REQUIRE_NOTHROW(validate_mesh(mesh));
}

TEST_CASE(
    "Non-convex L-shaped prism faces are ear-clipped into a valid solid of volume 3 (elementary geometry)",
    "[mesh_io]") {
  // L outline counter-clockwise, started at a reflex-adjacent corner from which a fan would leave the
  // polygon.
  const double outline[6][2] = {{2, 1}, {1, 1}, {1, 2}, {0, 2}, {0, 0}, {2, 0}};
  std::string text;
  for (int z = 0; z < 2; ++z)
    for (const auto& p : outline) text += fmt::format("v {} {} {}\n", p[0], p[1], z);
  text += "f 6 5 4 3 2 1\nf 7 8 9 10 11 12\n";  // bottom clockwise from above, top counter-clockwise
  for (int i = 0; i < 6; ++i) {
    const int j = (i + 1) % 6;
    text += fmt::format("f {} {} {} {}\n", i + 1, j + 1, j + 7, i + 7);
  }
  const std::string path = temp_directory() + "/ell.obj";
  write_text(path, text);
  Mesh mesh = read_mesh(path, {});
  REQUIRE(mesh.faces.rows() == 2 * 4 + 6 * 2);
  REQUIRE(volume_of(mesh) == Approx(3.0).margin(1e-14));
  REQUIRE_NOTHROW(validate_mesh(mesh));
}

TEST_CASE(
    "PLY cube of quads, ascii and binary little-endian, reads as 12 triangles of volume 1 (elementary "
    "geometry)",
    "[mesh_io]") {
  const std::string dir = temp_directory();
  std::string ascii = ply_header("ascii");
  for (const auto& p : kCube) ascii += fmt::format("{} {} {}\n", p[0], p[1], p[2]);
  for (const auto& q : kCubeQuads) ascii += fmt::format("4 {} {} {} {}\n", q[0], q[1], q[2], q[3]);
  write_text(dir + "/ascii.ply", ascii);

  std::string binary = ply_header("binary_little_endian");
  for (const auto& p : kCube)
    for (double x : p) append_binary<double>(binary, x);
  for (const auto& q : kCubeQuads) {
    append_binary<std::uint8_t>(binary, 4);
    for (int v : q) append_binary<std::int32_t>(binary, v);
  }
  write_text(dir + "/binary.ply", binary);

  for (const char* name : {"/ascii.ply", "/binary.ply"}) {
    CAPTURE(name);
    Mesh mesh = read_mesh(dir + name, {});
    REQUIRE(mesh.vertices.rows() == 8);
    REQUIRE(mesh.faces.rows() == 12);
    REQUIRE(volume_of(mesh) == Approx(1.0).margin(1e-15));
    REQUIRE_NOTHROW(validate_mesh(mesh));
  }
}

TEST_CASE(
    "STL cube soups (ascii and binary): 36 vertex records weld into 8 vertices, volume 1 (elementary "
    "geometry)",
    "[mesh_io]") {
  const std::string dir = temp_directory();
  write_text(dir + "/ascii.stl", cube_ascii_stl());
  write_text(dir + "/binary.STL", cube_binary_stl());
  for (const char* name : {"/ascii.stl", "/binary.STL"}) {
    CAPTURE(name);
    Mesh mesh = read_mesh(dir + name, {});
    REQUIRE(mesh.vertices.rows() == 8);
    REQUIRE(mesh.faces.rows() == 12);
    REQUIRE(has_notice(mesh, "merged 28 duplicate vertices (tolerance 0 m)"));
    REQUIRE(volume_of(mesh) == Approx(1.0).margin(1e-15));
    REQUIRE_NOTHROW(validate_mesh(mesh));
  }
}

TEST_CASE("Merge tolerance welds near-duplicate STL corners, given in the file's unit", "[mesh_io]") {
  const std::string path = temp_directory() + "/jittered.stl";
  write_text(path, cube_ascii_stl(1e-7));
  const Mesh exact = read_mesh(path, {});
  REQUIRE(exact.vertices.rows() > 8);

  MeshReadOptions options;
  options.unit = LengthUnit::kilometer;
  options.merge_tolerance = 3e-7;  // km, above the 2e-7 km spread of the jittered copies
  Mesh welded = read_mesh(path, options);
  REQUIRE(welded.vertices.rows() == 8);
  REQUIRE(has_notice(welded, "merged 28 duplicate vertices (tolerance 3e-07 km)"));
  REQUIRE(volume_of(welded) == Approx(1e9).epsilon(1e-5));  // (1 km)^3 in m^3
  REQUIRE_NOTHROW(validate_mesh(welded));

  options.merge_tolerance = 0.5e-7;  // smaller than the jitter: nothing near-duplicate is welded
  REQUIRE(read_mesh(path, options).vertices.rows() == exact.vertices.rows());
}

TEST_CASE("Vertices used by no face are dropped with a notice, file order kept", "[mesh_io]") {
  const std::string path = temp_directory() + "/spare.obj";
  write_text(path, "v 9 9 9\nv 0 0 0\nv 1 0 0\nv 0 1 0\nv 0 0 1\nf 2 4 3\nf 2 3 5\nf 2 5 4\nf 3 4 5\n");
  const Mesh mesh = read_mesh(path, {});
  REQUIRE(mesh.vertices.rows() == 4);
  REQUIRE(mesh.vertices.row(0) == Eigen::RowVector3d(0, 0, 0));
  REQUIRE(mesh.vertices.row(3) == Eigen::RowVector3d(0, 0, 1));
  REQUIRE(has_notice(mesh, "dropped 1 vertex not used by any face"));
  REQUIRE(volume_of(mesh) ==
          Approx(1.0 / 6.0).epsilon(1e-15));  // unit corner tetrahedron, elementary geometry
}

TEST_CASE("sha256_file_hex matches the FIPS 180-2 test vector for \"abc\"", "[mesh_io]") {
  const std::string path = temp_directory() + "/abc.txt";
  write_text(path, "abc");
  // FIPS 180-2 (2002), Appendix B.1, SHA-256 of "abc".
  REQUIRE(sha256_file_hex(path) == "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
  REQUIRE_THROWS_AS(sha256_file_hex(temp_directory() + "/missing"), FormatError);
}

TEST_CASE("Unreadable mesh files give one-line errors naming the file and the problem", "[mesh_io]") {
  SECTION("missing file") {
    const std::string path = temp_directory() + "/nowhere.obj";
    require_one_line_naming(message_of<FormatError>([&] { read_mesh(path, {}); }), path, "No such file");
  }
  SECTION("empty file") {
    const std::string path = source_path("tests/data/empty.obj");
    require_one_line_naming(message_of<MeshError>([&] { read_mesh(path, {}); }), path, "file is empty");
  }
  SECTION("unknown format") {
    const std::string path = source_path("tests/data/unknown_format.xyz");
    require_one_line_naming(message_of<MeshError>([&] { read_mesh(path, {}); }), path,
                            "unknown mesh format '.xyz'");
  }
  SECTION("NaN coordinate names the line and vertex") {
    const std::string path = source_path("tests/data/nan_vertex.obj");
    require_one_line_naming(message_of<FormatError>([&] { read_mesh(path, {}); }),
                            path + ":4:", "vertex 3 has a non-finite coordinate (0 nan 0)");
  }
  SECTION("vertex index out of range names the line and face") {
    const std::string path = source_path("tests/data/index_out_of_range.obj");
    require_one_line_naming(message_of<FormatError>([&] { read_mesh(path, {}); }),
                            path + ":15:", "face 6 refers to vertex 9, but only 8 vertices are defined");
  }
  SECTION("face with two vertices") {
    const std::string path = source_path("tests/data/two_vertex_face.obj");
    require_one_line_naming(message_of<FormatError>([&] { read_mesh(path, {}); }),
                            path + ":11:", "face 2 has 2 vertices, a face needs at least 3");
  }
  SECTION("unparsable coordinate") {
    const std::string path = temp_directory() + "/words.obj";
    write_text(path, "v 0 0 0\nv 1 0 zero\n");
    require_one_line_naming(message_of<FormatError>([&] { read_mesh(path, {}); }),
                            path + ":2:", "cannot parse vertex coordinate 'zero'");
  }
  SECTION("a vertex keyword in capitals names the line instead of surfacing later as an index error") {
    // Wavefront OBJ keywords are lower case ("v x y z"); skipping "V" (as tinyobjloader did) would leave face
    // 4 pointing at a vertex that was never read.
    const std::string path = temp_directory() + "/capital.obj";
    write_text(path, "v 0 0 0\nv 1 0 0\nv 0 1 0\nV 0 0 1\nf 1 3 2\nf 1 2 4\nf 1 4 3\nf 2 3 4\n");
    require_one_line_naming(message_of<FormatError>([&] { read_mesh(path, {}); }),
                            path + ":4:", "unknown statement 'V': OBJ keywords are lower case ('v')");
  }
  SECTION("an unknown statement followed by numbers reads like a vertex or face and is refused") {
    const std::string path = temp_directory() + "/misspelt.obj";
    write_text(path, "v 0 0 0\nv 1 0 0\nv 0 1 0\nv 0 0 1\nf 1 3 2\nfc 1 2 4\nf 1 4 3\nf 2 3 4\n");
    require_one_line_naming(message_of<FormatError>([&] { read_mesh(path, {}); }),
                            path + ":6:", "unknown statement 'fc' followed by numbers");
  }
  SECTION("no faces") {
    const std::string path = temp_directory() + "/points.obj";
    write_text(path, "# only points\nv 0 0 0\nv 1 0 0\nv 0 1 0\n");
    require_one_line_naming(message_of<MeshError>([&] { read_mesh(path, {}); }), path, "no faces");
  }
  SECTION("OFF with an out-of-range index") {
    const std::string path = temp_directory() + "/bad.off";
    write_text(path, "OFF\n3 1 0\n0 0 0\n1 0 0\n0 1 0\n3 0 1 7\n");
    require_one_line_naming(message_of<FormatError>([&] { read_mesh(path, {}); }), path,
                            "cannot parse OFF data");
  }
  SECTION("binary STL with a NaN names the facet") {
    const std::string path = temp_directory() + "/nan.stl";
    write_text(path, cube_binary_stl(std::nanf("")));
    require_one_line_naming(message_of<FormatError>([&] { read_mesh(path, {}); }), path,
                            "facet 1 of 12 has a non-finite vertex coordinate");
  }
  SECTION("polygon with all corners on one line") {
    const std::string path = temp_directory() + "/flat.obj";
    write_text(path, "v 0 0 0\nv 1 0 0\nv 2 0 0\nv 3 0 0\nf 1 2 3 4\n");
    require_one_line_naming(message_of<MeshError>([&] { read_mesh(path, {}); }), path,
                            "face 1 (4 vertices) cannot be split into triangles");
  }
  SECTION("negative merge tolerance") {
    MeshReadOptions options;
    options.merge_tolerance = -1;
    REQUIRE_THROWS_AS(read_mesh(source_path("tests/data/open_box.obj"), options), ConventionError);
  }
}

TEST_CASE("The usual OBJ statements besides v and f are read past (Wavefront OBJ, Appendix B1)",
          "[mesh_io]") {
  const std::string path = temp_directory() + "/tetra.obj";
  write_text(path,
             "# corner tetrahedron\nmtllib body.mtl\no body\ng outside\ns off\nusemtl rock\n"
             "v 0 0 0\nv 1 0 0\nv 0 1 0\nv 0 0 1\nvt 0 0\nvn 0 0 1\nvp 0.5\nl 1 2\n"
             "f 1 3 2\nf 1 2 4\nf 1 4 3\nf 2 3 4\nexporter_comment written by hand\n");
  const Mesh mesh = read_mesh(path, {});
  REQUIRE(mesh.faces.rows() == 4);
  REQUIRE(volume_of(mesh) ==
          Approx(1.0 / 6.0).epsilon(1e-15));  // unit corner tetrahedron, elementary geometry
}

TEST_CASE("write_obj replaces files atomically and leaves nothing behind on failure", "[mesh_io]") {
  const std::string dir = temp_directory();
  const Mesh box = make_box(1, 2, 3);
  write_text(dir + "/box.obj", "old content");
  write_obj(box, dir + "/box.obj", LengthUnit::meter);
  REQUIRE(read_mesh(dir + "/box.obj", {}).faces == box.faces);
  REQUIRE(std::distance(std::filesystem::directory_iterator(dir), std::filesystem::directory_iterator()) ==
          1);

  const std::string missing = dir + "/no/such/dir/box.obj";
  require_one_line_naming(message_of<OutputError>([&] { write_obj(box, missing, LengthUnit::meter); }),
                          missing, "cannot create");
  REQUIRE_FALSE(std::filesystem::exists(missing));
}
