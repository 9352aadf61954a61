// The real `polystokes convert` and `polystokes compare` on the exchange mistakes of issue 10: a plain table
// that does not say where its origin and axes are, a J-form table's degree-0 row, a reference radius off by
// the m/km factor, and two mistakes at once. Each expected value names its source.
#include <fmt/format.h>

#include <catch2/catch.hpp>
#include <cmath>
#include <nlohmann/json.hpp>

#include "polystokes/io/coefficient_file.h"
#include "polystokes/sets/conventions.h"
#include "polystokes/harmonics/compute.h"
#include "polystokes/mesh/shapes.h"
#include "test_support.h"
#include "polystokes/sets/transforms.h"

using namespace polystokes;
using namespace polystokes::test;

namespace {

std::string quoted(const std::string& path) { return "'" + path + "'"; }

// A lumpy body (no symmetry) placed so that its centre of mass is some 330 m from the mesh origin, degree 12.
const CoefficientSet& off_origin_set() {
  static const CoefficientSet set = [] {
    const Mesh mesh = lumpy_test_mesh();
    ComputeOptions options;
    options.degree = 12;
    options.body = "lumpy";
    return compute_coefficients(
        {DensityRegion{transformed(mesh, Eigen::Matrix3d::Identity(), Eigen::Vector3d(300, -120, 40)),
                       1800.0}},
        options);
  }();
  return set;
}

// "n m C S" rows of the set's own numbers, shortest round-trip decimals.
std::string table_of(const CoefficientSet& set) {
  std::string text = "# n m C S\n";
  for (int n = 0; n <= set.degree; ++n)
    for (int m = 0; m <= n; ++m) text += fmt::format("{} {} {} {}\n", n, m, set.C(n, m), set.S(n, m));
  return text;
}

// `convert TABLE` with the declarations of `set` (radius with its unit m, GM in m^3 s^-2) and `extra`
// options.
CommandResult import_table(const std::string& table, const CoefficientSet& set, const std::string& extra,
                           const std::string& out) {
  return run_cli(fmt::format(
      "convert {} --columns n,m,C,S --normalization {} {} {} --ref-radius {}m --gm {} {} -o {}",
      quoted(table), to_string(set.convention.normalization),
      set.convention.condon_shortley ? "--condon-shortley" : "--no-condon-shortley",
      set.convention.zonal_as_j ? "--zonal-j" : "", set.reference_radius, set.gm, extra, quoted(out)));
}

nlohmann::json compare_json(const std::string& a, const std::string& b, const std::string& extra,
                            std::string* text = nullptr) {
  const std::string json = a + ".compare.json";
  const CommandResult r =
      run_cli("compare " + quoted(a) + " " + quoted(b) + " " + extra + " --json " + quoted(json));
  CAPTURE(r.output);
  REQUIRE(r.exit_code == 0);
  if (text) *text = r.output;
  return nlohmann::json::parse(read_bytes(json));
}

}  // namespace

TEST_CASE("a table imported without origin and axes records them as unknown; compare does not align them",
          "[compare_cli]") {
  // Regression (issue 10, defect 4): the import recorded origin "com" at (0,0,0), so frame alignment
  // (`compare --align-frames`) moved B by the 330 m between the mesh origin and the centre of mass and
  // reported DIFFER for the same field. Expected: the same numbers agree (a field compared with itself:
  // common practice).
  const std::string dir = temp_directory();
  const CoefficientSet& a = off_origin_set();
  REQUIRE(a.origin_in_mesh.norm() > 300);
  write_coefficient_file(a, dir + "/a.txt");
  write_text(dir + "/t.tab", table_of(a));

  CommandResult r = import_table(dir + "/t.tab", a, "", dir + "/bare.txt");
  CAPTURE(r.output);
  REQUIRE(r.exit_code == 0);
  const std::string file = read_bytes(dir + "/bare.txt");
  CHECK(file.find("origin = \"unknown\"\norigin_m = unknown\n") != std::string::npos);
  CHECK(file.find("frame_x_axis = unknown\n") != std::string::npos);
  std::string text;
  auto json = compare_json(dir + "/a.txt", dir + "/bare.txt", "--align-frames --tolerance 1e-12", &text);
  CHECK(json["agree"] == true);
  CHECK(json["origin"] == "unknown");
  CHECK(json["axes"] == "unknown");
  CHECK(text.find("origin not aligned: B's origin is unknown") != std::string::npos);
  CHECK(text.find("origin shifted") == std::string::npos);
  // Nor does `field` place mesh-frame points against an origin it does not know; set-frame points work.
  write_text(dir + "/p.csv", "x,y,z\n5000,0,0\n");
  r = run_cli("field " + quoted(dir + "/bare.txt") + " --points " + quoted(dir + "/p.csv") + " -o " +
              quoted(dir + "/f.csv"));
  CHECK(r.exit_code == 2);
  CHECK(r.output.find("does not know its origin and axes in the mesh frame") != std::string::npos);
  CHECK(!file_exists(dir + "/f.csv"));
  r = run_cli("field " + quoted(dir + "/bare.txt") + " --set-frame --points " + quoted(dir + "/p.csv") + " -o " +
              quoted(dir + "/f.csv"));
  CHECK(r.exit_code == 0);

  // Declared about the centre of mass, in the mesh's axes: the same origin and axes as A's.
  r = import_table(dir + "/t.tab", a, "--table-origin com --table-axes mesh", dir + "/com.txt");
  REQUIRE(r.exit_code == 0);
  CHECK(r.output.find("origin             com (place in the mesh frame unknown), axes mesh") !=
        std::string::npos);
  json = compare_json(dir + "/a.txt", dir + "/com.txt", "--align-frames --tolerance 1e-12");
  CHECK(json["agree"] == true);
  CHECK(json["origin"] == "same");
  CHECK(json["axes"] == "same");
  CHECK(json["alignment"].empty());  // same radius, GM and convention as A's: nothing to do
  // Declared at the point where A's centre of mass is, in km: the same again.
  const Eigen::Vector3d p = a.origin_in_mesh / 1000.0;
  r = import_table(dir + "/t.tab", a,
                   fmt::format("--unit km --table-origin {},{},{} --table-axes mesh", p.x(), p.y(), p.z()),
                   dir + "/point.txt");
  CAPTURE(r.output);
  REQUIRE(r.exit_code == 0);
  const CoefficientSet point = read_coefficient_file(dir + "/point.txt");
  CHECK(point.origin_known);
  CHECK((point.origin_in_mesh - a.origin_in_mesh).norm() < 1e-9);
  json = compare_json(dir + "/a.txt", dir + "/point.txt", "--align-frames --tolerance 1e-12");
  CHECK(json["agree"] == true);
  CHECK(json["origin"] == "same");
}

TEST_CASE("a J-form table with the usual degree-0 row 0 0 1 is read, and degree 0 stays +1 in J form",
          "[compare_cli]") {
  // Regression (issue 10, defect 14): "C00 = -1 is not positive". Tables in J form list degree 0 as
  // C00 = 1 (common practice: J_n = -C_n0 is defined for the zonal terms n >= 1, IERS Conventions 2010, eq.
  // 6.2 and Heiskanen & Moritz 1967, sec. 2-9, where J_0 does not occur).
  const std::string dir = temp_directory();
  const CoefficientSet& a = off_origin_set();
  write_coefficient_file(a, dir + "/a.txt");
  const CoefficientSet j = convert_convention(a, Convention{Normalization::unnormalized, false, true});
  REQUIRE(j.C(0, 0) == a.C(0, 0));
  REQUIRE(j.C(2, 0) == Approx(-a.C(2, 0) * std::sqrt(5.0)).epsilon(1e-12));  // J2 = -sqrt(5) C20 (fully)
  const std::string table = table_of(j);
  REQUIRE(table.find("\n0 0 1 0\n") != std::string::npos);
  write_text(dir + "/j.tab", table);
  CommandResult r = import_table(dir + "/j.tab", j, "", dir + "/j.txt");
  CAPTURE(r.output);
  REQUIRE(r.exit_code == 0);
  CHECK(read_coefficient_file(dir + "/j.txt").C(0, 0) == 1.0);
  CHECK(compare_json(dir + "/a.txt", dir + "/j.txt", "--tolerance 1e-12")["agree"] == true);
  // convert --to-zonal j keeps C00 = +1 in the file it writes.
  r = run_cli("convert " + quoted(dir + "/a.txt") + " --to-zonal j -o " + quoted(dir + "/aj.txt"));
  REQUIRE(r.exit_code == 0);
  const CoefficientSet aj = read_coefficient_file(dir + "/aj.txt");
  CHECK(aj.C(0, 0) == a.C(0, 0));
  CHECK(aj.C(2, 0) == -a.C(2, 0));
}

TEST_CASE("compare names a reference radius declared 1000 times too small as a likely m/km mix-up",
          "[compare_cli]") {
  // Regression (issue 10, defect 5): no radius hypothesis was made for a factor of 1000. The coefficients are
  // for R; B declares R / 1000 (a radius in km given as metres: the classic forgotten --unit km).
  const std::string dir = temp_directory();
  const CoefficientSet& a = off_origin_set();
  write_coefficient_file(a, dir + "/a.txt");
  CoefficientSet b = a;
  b.reference_radius = a.reference_radius / 1000;
  write_coefficient_file(b, dir + "/b.txt");
  std::string text;
  const auto json = compare_json(dir + "/a.txt", dir + "/b.txt", "--tolerance 1e-9", &text);
  CHECK(json["agree"] == false);
  CHECK(json["diagnosis"][0]["kind"] == "radius");
  CHECK(json["diagnosis"][0]["explains"] == true);
  CHECK_THAT(json["diagnosis"][0]["parameter"].get<double>(), Catch::Matchers::WithinRel(1000.0, 1e-9));
  CHECK(text.find("verdict: DIFFER") != std::string::npos);
  CHECK(text.find("likely a length in km read as m") != std::string::npos);
}

TEST_CASE("compare names two combined mistakes, and calls a partial explanation partial", "[compare_cli]") {
  // Regression (issue 10, defect 15): Schmidt numbers declared fully normalized with a radius 1.1 times off
  // were explained as "gm, factor 0.567". Schmidt = fully / sqrt(2n+1) (Heiskanen & Moritz 1967, sec. 1-14).
  const std::string dir = temp_directory();
  const CoefficientSet& a = off_origin_set();
  write_coefficient_file(a, dir + "/a.txt");
  CoefficientSet b = expressed_in(a, Convention{Normalization::schmidt, false, false});
  b.convention = a.convention;
  b.reference_radius = a.reference_radius * 1.1;
  write_coefficient_file(b, dir + "/b.txt");
  std::string text;
  auto json = compare_json(dir + "/a.txt", dir + "/b.txt", "--tolerance 1e-9", &text);
  CHECK(json["diagnosis"][0]["kind"] == "normalization+radius");
  CHECK(json["diagnosis"][0]["explains"] == true);
  CHECK(text.find("most likely normalization+radius") != std::string::npos);
  // A third change no usual mistake makes: the verdict says the best explanation is partial.
  b.C(5, 3) *= 1.5;
  write_coefficient_file(b, dir + "/b.txt");
  json = compare_json(dir + "/a.txt", dir + "/b.txt", "--tolerance 1e-9", &text);
  CHECK(json["diagnosis"][0]["explains"] == false);
  CHECK(text.find("only partly explains") != std::string::npos);
  CHECK(text.find("most likely") == std::string::npos);
}
