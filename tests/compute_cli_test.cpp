// End-to-end checks of `polystokes compute` and `inspect`: the demo shapes run, bad inputs give a one-line
// error, exit code 2 and no output file; the written set reads back and matches the library.
#include <catch2/catch.hpp>
#include <cmath>

#include "polystokes/io/coefficient_file.h"
#include "polystokes/core/constants.h"
#include "polystokes/harmonics/moments.h"
#include "polystokes/io/mesh_io.h"
#include "polystokes/mesh/shapes.h"
#include "test_support.h"

using namespace polystokes;
using namespace polystokes::test;

namespace {

std::string quoted(const std::string& path) { return "'" + path + "'"; }

// Runs compute on `mesh_path` and checks it fails with exit code 2, a single error line mentioning `expected`,
// and leaves no output file.
void require_refused(const std::string& mesh_path, const std::string& extra, const std::string& expected) {
  const std::string dir = temp_directory();
  const std::string out = dir + "/set.txt";
  const CommandResult result =
      run_cli("compute " + quoted(mesh_path) + " --degree 4 " + extra + " -o " + quoted(out));
  CAPTURE(mesh_path, result.output);
  CHECK(result.exit_code == 2);
  CHECK(result.output.find(expected) != std::string::npos);
  CHECK(result.output.find("error") != std::string::npos);
  CHECK(!file_exists(out));
}

std::string write_mesh_text(const std::string& name, const std::string& text) {
  const std::string path = temp_directory() + "/" + name;
  write_text(path, text);
  return path;
}

const char* cube_obj_without_top =
    "v 0 0 0\nv 1 0 0\nv 0 1 0\nv 1 1 0\nv 0 0 1\nv 1 0 1\nv 0 1 1\nv 1 1 1\n"
    "f 1 3 2\nf 2 3 4\nf 1 2 5\nf 2 6 5\nf 3 7 4\nf 4 7 8\nf 1 5 3\nf 3 5 7\nf 2 4 6\nf 4 8 6\n";

}  // namespace

TEST_CASE("compute on the demo unit cube writes a set whose C40 matches the closed form", "[compute_cli]") {
  // Closed form of the cube (see harmonics_test): unnormalized C40 = -7 h^4 / (30 R^4), h = 1/2.
  const std::string dir = temp_directory();
  const CommandResult result = run_cli("compute " + quoted(source_path("shapes-demo/unit_cube.obj")) +
                                       " --density 1000 --degree 4 --ref-radius 1 -o " + quoted(dir + "/cube.txt") +
                                       " --json " + quoted(dir + "/cube.json"));
  CAPTURE(result.output);
  REQUIRE(result.exit_code == 0);
  CHECK(result.output.find("reference radius") != std::string::npos);
  CHECK(result.output.find("CAUTION") != std::string::npos);
  const CoefficientSet set = read_coefficient_file(dir + "/cube.txt");
  const double n40 = 3.0;  // sqrt(2n+1) for m = 0
  CHECK_THAT(set.C(4, 0), Catch::Matchers::WithinRel(-7.0 / 480.0 / n40, 1e-12));
  CHECK_THAT(set.gm, Catch::Matchers::WithinRel(gravitational_constant * 1000.0, 1e-14));
  const CoefficientSet from_json = read_coefficient_file(dir + "/cube.json");
  CHECK(from_json.C(4, 0) == set.C(4, 0));
}

TEST_CASE("compute on the non-star-shaped demo body Varnek agrees with the library's reference path", "[compute_cli]") {
  // The CLI path (read OBJ in km, check, compute) against the slow quadrature reference computed here.
  const std::string dir = temp_directory();
  const std::string mesh_path = source_path("shapes-demo/varnek.obj");
  const CommandResult result =
      run_cli("compute " + quoted(mesh_path) + " --unit km --density 1900 --degree 12 -q -o " + quoted(dir + "/v.txt"));
  CAPTURE(result.output);
  REQUIRE(result.exit_code == 0);
  const CoefficientSet set = read_coefficient_file(dir + "/v.txt");
  MeshReadOptions read;
  read.unit = LengthUnit::kilometer;
  const std::vector<DensityRegion> regions{{read_mesh(mesh_path, read), 1900.0}};
  const MassProperties props = mass_properties(regions);
  HarmonicFrame frame;
  frame.origin = props.center_of_mass;
  frame.scale_radius = set.reference_radius;
  const HarmonicMoments reference = harmonic_moments_reference(regions, frame, 12);
  CoefficientSet expected = make_empty_set(12);
  moments_to_coefficients(reference, props.mass, set.reference_radius, expected);
  require_sets_close(set, expected, 12, 1e-10);
}

TEST_CASE("compute refuses bad meshes and parameters with exit code 2 and no output file", "[compute_cli]") {
  require_refused(write_mesh_text("open.obj", cube_obj_without_top), "--density 1000", "closed");
  require_refused(write_mesh_text("empty.obj", ""), "--density 1000", "empty.obj");
  require_refused(write_mesh_text("shape.xyz", "1 2 3\n"), "--density 1000", "shape.xyz");
  require_refused(write_mesh_text("nan.obj", "v 0 0 0\nv 1 0 0\nv 0 nan 0\nv 0 0 1\nf 1 3 2\nf 1 2 4\nf 1 4 3\nf 2 3 4\n"),
                  "--density 1000", "nan.obj");
  require_refused(source_path("shapes-demo/unit_cube.obj"), "--density -1000", "density");
  require_refused(source_path("tests/data/nonmanifold_edge.obj"), "--density 1000", "edge_manifold");
  require_refused(source_path("tests/data/self_intersecting.obj"), "--density 1000", "no_self_intersections");
  require_refused(source_path("tests/data/degenerate_face.obj"), "--density 1000", "no_degenerate_faces");
  require_refused(source_path("tests/data/flipped_face.obj"), "--density 1000", "consistently_oriented");
}

TEST_CASE("an inverted mesh is flipped with a notice and gives the same set", "[compute_cli]") {
  const std::string dir = temp_directory();
  Mesh cube = make_ellipsoid(2, 1.0, 0.8, 0.6);
  write_obj(cube, dir + "/good.obj", LengthUnit::meter);
  write_obj(reversed(cube), dir + "/inverted.obj", LengthUnit::meter);
  const CommandResult good = run_cli("compute " + quoted(dir + "/good.obj") + " --density 1000 --degree 6 -o " + quoted(dir + "/a.txt"));
  const CommandResult flipped = run_cli("compute " + quoted(dir + "/inverted.obj") + " --density 1000 --degree 6 -o " + quoted(dir + "/b.txt"));
  CAPTURE(flipped.output);
  REQUIRE(good.exit_code == 0);
  REQUIRE(flipped.exit_code == 0);
  CHECK(flipped.output.find("note") != std::string::npos);
  require_sets_close(read_coefficient_file(dir + "/a.txt"), read_coefficient_file(dir + "/b.txt"), 6, 1e-15);
  // The reversal is part of the set's provenance, not only of the terminal output.
  const CoefficientSet set = read_coefficient_file(dir + "/b.txt");
  REQUIRE_FALSE(set.history.empty());
  CHECK(set.history.front().find("region 1 mesh " + dir +
                                 "/inverted.obj: reversed all 320 faces: the mesh was "
                                 "inside-out") == 0);
  for (const auto& line : read_coefficient_file(dir + "/a.txt").history)
    CHECK(line.find("reversed") == std::string::npos);
}

TEST_CASE("compute refuses a void that is not inside the first mesh, naming the face or vertex",
          "[compute_cli]") {
  // Outer box 2 m, void box 1 m: inside, the mass is 1500 (8 - 1) kg and GM = G times that (elementary
  // geometry); shifted by 0.8 m it pokes out through the x = +1 side; shifted by 4 m it is wholly outside.
  const std::string dir = temp_directory();
  write_obj(make_box(2, 2, 2), dir + "/outer.obj", LengthUnit::meter);
  write_obj(make_box(1, 1, 1), dir + "/void.obj", LengthUnit::meter);
  const Eigen::Matrix3d identity = Eigen::Matrix3d::Identity();
  write_obj(transformed(make_box(1, 1, 1), identity, Eigen::Vector3d(0.8, 0, 0)), dir + "/poking.obj",
            LengthUnit::meter);
  write_obj(transformed(make_box(1, 1, 1), identity, Eigen::Vector3d(4, 0, 0)), dir + "/outside.obj",
            LengthUnit::meter);
  const std::string outer = quoted(dir + "/outer.obj");
  const CommandResult inside = run_cli("compute " + outer + " " + quoted(dir + "/void.obj") +
                                       " --density 1500 -1500 --degree 2 -o " + quoted(dir + "/inside.txt"));
  CAPTURE(inside.output);
  REQUIRE(inside.exit_code == 0);
  CHECK_THAT(read_coefficient_file(dir + "/inside.txt").gm,
             Catch::Matchers::WithinRel(gravitational_constant * 1500.0 * 7.0, 1e-14));
  require_refused(dir + "/outer.obj", quoted(dir + "/poking.obj") + " --density 1500 -1500",
                  "poking.obj: region 2 (density -1500 kg/m^3) must lie inside the first mesh");
  require_refused(dir + "/outer.obj", quoted(dir + "/poking.obj") + " --density 1500 -1500",
                  "touches or crosses face");
  require_refused(dir + "/outer.obj", quoted(dir + "/outside.obj") + " --density 1500 -1500",
                  "its vertex 0 (3.5, -0.5, -0.5) m lies outside");
  // Every command that superposes meshes applies the same rule.
  write_text(dir + "/points.csv", "x,y,z\n10,0,0\n");
  for (const std::string& command :
       {"field " + outer + " " + quoted(dir + "/poking.obj") + " --density 1500 -1500 --points " +
            quoted(dir + "/points.csv") + " -o " + quoted(dir + "/field.csv"),
        "uncertainty " + outer + " " + quoted(dir + "/poking.obj") +
            " --density 1500 -1500 --degree 2 --samples 4 --seed 1 --density-sigma 0.01 -o " +
            quoted(dir + "/sigma.txt")}) {
    const CommandResult result = run_cli(command);
    CAPTURE(command, result.output);
    CHECK(result.exit_code == 2);
    CHECK(result.output.find("must lie inside the first mesh") != std::string::npos);
  }
  CHECK(!file_exists(dir + "/field.csv"));
  CHECK(!file_exists(dir + "/sigma.txt"));
}

TEST_CASE("inspect prints every check and the mass properties of the demo cube", "[compute_cli]") {
  const CommandResult result = run_cli("inspect " + quoted(source_path("shapes-demo/unit_cube.obj")) + " --density 1000");
  CAPTURE(result.output);
  REQUIRE(result.exit_code == 0);
  for (const char* word : {"closed", "edge_manifold", "no_self_intersections", "outward_oriented", "volume", "inertia"})
    CHECK(result.output.find(word) != std::string::npos);
  const CommandResult open = run_cli("inspect " + quoted(write_mesh_text("open.obj", cube_obj_without_top)));
  CHECK(open.exit_code == 2);
  CHECK(open.output.find("FAILED") != std::string::npos);
}
