// End-to-end checks of `polystokes inspect`: one rule for inside-out meshes (reversed with a notice), exit
// code 2 and a printed error for a failed check even with -q, the shape measures in text and JSON against
// closed forms of the demo unit cube, and OBJ records in the wrong case refused with their line.
#include <fmt/format.h>

#include <algorithm>
#include <catch2/catch.hpp>
#include <cmath>
#include <nlohmann/json.hpp>

#include "polystokes/io/mesh_io.h"
#include "polystokes/mesh/shapes.h"
#include "test_support.h"

using namespace polystokes;
using namespace polystokes::test;
using Catch::Matchers::Contains;
using Catch::Matchers::WithinRel;

namespace {

std::string quoted(const std::string& path) { return "'" + path + "'"; }

size_t lines(const std::string& text) { return size_t(std::count(text.begin(), text.end(), '\n')); }

}  // namespace

TEST_CASE("inspect reverses an inside-out mesh with a notice and exits 0, as compute does", "[inspect_cli]") {
  const std::string mesh = temp_directory() + "/inverted.obj";
  write_obj(reversed(make_box(2, 3, 4)), mesh, LengthUnit::meter);
  const CommandResult result = run_cli("inspect " + quoted(mesh));
  CAPTURE(result.output);
  CHECK(result.exit_code == 0);
  CHECK_THAT(result.output, Contains("note: " + mesh + ": reversed all 12 faces: the mesh was inside-out"));
  CHECK_THAT(result.output, Contains("outward_oriented         ok after reversing every face"));
  CHECK(result.output.find("FAILED") == std::string::npos);
  // The volume after reversal is a b c = 24 m^3 (elementary geometry).
  CHECK_THAT(result.output, Contains("volume             24 m^3"));
  const CommandResult quiet = run_cli("-q inspect " + quoted(mesh));
  CHECK(quiet.exit_code == 0);
  CHECK(quiet.output.empty());
}

TEST_CASE("inspect exits 2 on a failed check and prints the failure even with -q", "[inspect_cli]") {
  const std::string open = source_path("tests/data/open_box.obj");
  const CommandResult loud = run_cli("inspect " + quoted(open));
  CAPTURE(loud.output);
  CHECK(loud.exit_code == 2);
  CHECK_THAT(loud.output, Contains("check closed                   FAILED: 4 border edges"));
  CHECK_THAT(loud.output, Contains("error: " + open + ": mesh check 'closed' failed: 4 border edges"));
  const CommandResult quiet = run_cli("-q inspect " + quoted(open));
  CAPTURE(quiet.output);
  CHECK(quiet.exit_code == 2);
  CHECK(lines(quiet.output) == 1);
  CHECK_THAT(quiet.output, Contains("mesh check 'closed' failed"));
}

TEST_CASE("inspect shows the demo cube's area, box, equivalent radius and edges as the closed forms give",
          "[inspect_cli]") {
  // Unit cube [-0.5, 0.5]^3 split into 12 triangles: area 6 m^2, 12 edges of 1 m and 6 face diagonals of
  // sqrt(2) m, equivalent radius (3 / (4 pi))^(1/3) = 0.620350491 m (elementary geometry).
  const double pi = std::acos(-1.0);
  const double radius = std::cbrt(3.0 / (4.0 * pi));
  const double mean_edge = (12.0 + 6.0 * std::sqrt(2.0)) / 18.0;
  const std::string cube = quoted(source_path("shapes-demo/unit_cube.obj"));
  const CommandResult text = run_cli("inspect " + cube + " --density 1000");
  CAPTURE(text.output);
  REQUIRE(text.exit_code == 0);
  CHECK_THAT(text.output, Contains("surface area       6 m^2"));
  CHECK_THAT(text.output, Contains("min (-0.5, -0.5, -0.5) m"));
  CHECK_THAT(text.output, Contains("max (0.5, 0.5, 0.5) m"));
  CHECK_THAT(text.output, Contains(fmt::format("equivalent radius  {:.9g} m", radius)));
  CHECK_THAT(text.output, Contains("components         1"));
  CHECK_THAT(text.output,
             Contains(fmt::format("min 1, mean {:.6g}, max {:.6g} m", mean_edge, std::sqrt(2.0))));

  const std::string json_path = temp_directory() + "/cube.json";
  const CommandResult written = run_cli("inspect " + cube + " --density 1000 --json " + quoted(json_path));
  REQUIRE(written.exit_code == 0);
  CHECK_THAT(written.output, Contains("surface area"));  // the text is still printed
  // With - the JSON goes to stdout (the text to stderr, here silenced by -q).
  const CommandResult piped = run_cli("-q inspect " + cube + " --density 1000 --json -");
  REQUIRE(piped.exit_code == 0);
  CHECK(piped.output == read_bytes(json_path));
  const auto json = nlohmann::json::parse(read_bytes(json_path));
  CHECK(json["valid"] == true);
  CHECK(json["unit"] == "m");
  CHECK(json["checks"].size() == 9);
  CHECK(json["mass_properties"]["volume_m3"].get<double>() == Approx(1.0).epsilon(1e-15));
  CHECK(json["mass_properties"]["mass_kg"].get<double>() == Approx(1000.0).epsilon(1e-15));
  const auto& shape = json["shape"];
  CHECK_THAT(shape["surface_area_m2"].get<double>(), WithinRel(6.0, 1e-15));
  CHECK(shape["bounding_box_min_m"] == nlohmann::json::array({-0.5, -0.5, -0.5}));
  CHECK(shape["bounding_box_max_m"] == nlohmann::json::array({0.5, 0.5, 0.5}));
  CHECK_THAT(shape["equivalent_radius_m"].get<double>(), WithinRel(radius, 1e-15));
  CHECK(shape["components"] == 1);
  CHECK(shape["edge_length_min_m"] == 1.0);
  CHECK_THAT(shape["edge_length_mean_m"].get<double>(), WithinRel(mean_edge, 1e-15));
  CHECK_THAT(shape["edge_length_max_m"].get<double>(), WithinRel(std::sqrt(2.0), 1e-15));
  CHECK(shape["resolvable_degree"] == int(std::floor(pi * radius / mean_edge)));
}

TEST_CASE("inspect --json of a failed mesh lists the checks, then exits 2", "[inspect_cli]") {
  const std::string json_path = temp_directory() + "/open.json";
  const CommandResult result =
      run_cli("inspect " + quoted(source_path("tests/data/open_box.obj")) + " --json " + quoted(json_path));
  CHECK(result.exit_code == 2);
  const auto json = nlohmann::json::parse(read_bytes(json_path));
  CHECK(json["valid"] == false);
  CHECK(json["checks"][3]["name"] == "closed");
  CHECK(json["checks"][3]["passed"] == false);
  CHECK(json["checks"][3]["count"] == 4);
  CHECK(json.find("shape") == json.end());
}

TEST_CASE("inspect refuses an OBJ vertex written 'V' with the file and line, not a later index error",
          "[inspect_cli]") {
  const std::string mesh = temp_directory() + "/capital.obj";
  write_text(mesh, "v 0 0 0\nv 1 0 0\nv 0 1 0\nV 0 0 1\nf 1 3 2\nf 1 2 4\nf 1 4 3\nf 2 3 4\n");
  const CommandResult result = run_cli("inspect " + quoted(mesh));
  CAPTURE(result.output);
  CHECK(result.exit_code == 2);
  CHECK(lines(result.output) == 1);
  CHECK_THAT(result.output, Contains(mesh + ":4: unknown statement 'V'"));
  CHECK(result.output.find("refers to vertex") == std::string::npos);
}
