// The one unit rule (docs/units.md) through every command: the same physical inputs given once in m and once
// in km give identical results, bare GM/mass/density are SI in every command, and malformed numbers are
// refused.
#include <catch2/catch.hpp>
#include <nlohmann/json.hpp>

#include "polystokes/io/coefficient_file.h"
#include "polystokes/io/mesh_io.h"
#include "polystokes/mesh/shapes.h"
#include "test_support.h"

using namespace polystokes;
using namespace polystokes::test;

namespace {

std::string arg(const std::string& path) { return "'" + path + "'"; }

// One body written twice: in km and in m. The metre file holds each km coordinate times 1000 in round-trip
// digits, so both files give the same doubles in metres (checked below) and results must agree bit for bit.
struct TwoUnits {
  std::string dir = temp_directory();
  std::string km = dir + "/lump_km.obj";
  std::string m = dir + "/lump_m.obj";
  TwoUnits() {
    const Mesh body = transformed(make_ellipsoid(2, 1400.0, 1000.0, 800.0), Eigen::Matrix3d::Identity(),
                                  Eigen::Vector3d(120.0, -60.0, 40.0));
    write_obj(body, km, LengthUnit::kilometer);
    write_obj(read_mesh(km, {LengthUnit::kilometer, 0.0}), m, LengthUnit::meter);
  }
  CoefficientSet run(const std::string& arguments, const std::string& name) const {
    const std::string out = dir + "/" + name + ".txt";
    const CommandResult result = run_cli(arguments + " -o " + arg(out));
    INFO(arguments << "\n" << result.output);
    REQUIRE(result.exit_code == 0);
    return read_coefficient_file(out);
  }
};

void require_same_coefficients(const CoefficientSet& a, const CoefficientSet& b) {
  require_sets_identical(a, b);
  CHECK(a.origin_in_mesh == b.origin_in_mesh);
}

}  // namespace

TEST_CASE("the two mesh files of the unit tests hold the same body in metres", "[units_cli]") {
  const TwoUnits body;
  const Mesh km = read_mesh(body.km, {LengthUnit::kilometer, 0.0});
  const Mesh m = read_mesh(body.m, {LengthUnit::meter, 0.0});
  CHECK(km.vertices == m.vertices);
  CHECK(km.faces == m.faces);
}

TEST_CASE("compute gives the same set for the same inputs in m and in km", "[units_cli]") {
  const TwoUnits body;
  const CoefficientSet km = body.run(
      "compute " + arg(body.km) + " --unit km --density 1900 --degree 6 --ref-radius 1.5 --origin 0.1,0,0",
      "km");
  const CoefficientSet m = body.run(
      "compute " + arg(body.m) + " --unit m --density 1.9g/cm3 --degree 6 --ref-radius 1500 --origin 100,0,0",
      "m");
  const CoefficientSet mixed = body.run(
      "compute " + arg(body.m) + " --density 1900kg/m3 --degree 6 --ref-radius 1.5km --origin 0.1km,0km,0km",
      "mixed");
  require_same_coefficients(km, m);
  require_same_coefficients(km, mixed);
  CHECK(to_string(km.origin) == "point");
  CHECK(km.reference_radius == 1500.0);
}

TEST_CASE("compute --gm is m^3 s^-2 whatever --unit says, as convert --to-gm is (issue 10, defect 1)",
          "[units_cli]") {
  // Before the unit rule, convert read a bare --to-gm in --unit^3 s^-2: 10^9 times the value compute read.
  const TwoUnits body;
  const CoefficientSet computed =
      body.run("compute " + arg(body.km) + " --unit km --gm 508.118588 --degree 4", "gm");
  CHECK(computed.gm == 508.118588);
  const CoefficientSet suffixed =
      body.run("compute " + arg(body.km) + " --unit km --gm 5.08118588e-7km3/s2 --degree 4", "gm_km");
  CHECK_THAT(suffixed.gm, Catch::Matchers::WithinRel(508.118588, 1e-15));
  const std::string set = body.dir + "/gm.txt";
  const CoefficientSet converted = body.run("convert " + arg(set) + " --unit km --to-gm 508.118588", "conv");
  CHECK(converted.gm == 508.118588);
  CHECK(converted.C == computed.C);
}

TEST_CASE("convert reads bare lengths in --unit and GM in SI: m and km runs agree", "[units_cli]") {
  const TwoUnits body;
  body.run("compute " + arg(body.km) + " --unit km --density 1900 --degree 6", "base");
  const std::string base = arg(body.dir + "/base.txt");
  const CoefficientSet km =
      body.run("convert " + base + " --unit km --to-ref-radius 2 --shift 0.05,0.01,0 --to-gm 5e11", "ckm");
  const CoefficientSet m =
      body.run("convert " + base + " --to-ref-radius 2000 --shift 50,10,0 --to-gm 5e11m3/s2", "cm");
  require_same_coefficients(km, m);
  CHECK(km.reference_radius == 2000.0);
  CHECK(km.gm == 5e11);
  const CoefficientSet radians = body.run("convert " + base + " --rotate-euler 0.5rad,0rad,0rad", "rad");
  const CoefficientSet degrees =
      body.run("convert " + base + " --rotate-euler 28.64788975654116,0,0", "deg");  // 0.5 * 180 / pi
  require_sets_close(radians, degrees, 6, 1e-14);
}

TEST_CASE("field reads points in --unit, or in the unit their header declares (issue 10, defect 2)",
          "[units_cli]") {
  const TwoUnits body;
  body.run("compute " + arg(body.km) + " --unit km --density 1900 --degree 6", "set");
  const std::string set = arg(body.dir + "/set.txt");
  write_text(body.dir + "/p_km.csv", "x,y,z\n4,0,0\n0,3.5,1\n");
  write_text(body.dir + "/p_m.csv", "x,y,z\n4000,0,0\n0,3500,1000\n");
  write_text(body.dir + "/p_declared.csv", "x_km,y_km,z_km\n4,0,0\n0,3.5,1\n");
  const auto field = [&](const std::string& input, const std::string& points, const std::string& extra) {
    const std::string out = body.dir + "/f.csv";
    const CommandResult result = run_cli("field " + input + " --points " + arg(body.dir + "/" + points) +
                                         " " + extra + " -o " + arg(out));
    INFO(result.output);
    REQUIRE(result.exit_code == 0);
    return read_bytes(out);
  };
  const std::string in_m = field(set, "p_m.csv", "");
  CHECK(in_m.rfind("x_m,y_m,z_m,U_m2_s2,ax_m_s2,ay_m_s2,az_m_s2\n4000,0,0,", 0) == 0);
  CHECK(field(set, "p_km.csv", "--unit km") == in_m);
  CHECK(field(set, "p_declared.csv", "") == in_m);  // the header wins over the default --unit m
  const std::string exact_m = field(arg(body.m), "p_m.csv", "--density 1900");
  CHECK(field(arg(body.km), "p_km.csv", "--unit km --density 1.9g/cm3") == exact_m);
}

TEST_CASE("validate reads --altitudes in the mesh unit: 1 with --unit km is 1000 m (issue 10, defect 2)",
          "[units_cli]") {
  const TwoUnits body;
  body.run("compute " + arg(body.km) + " --unit km --density 1900 --degree 6", "set");
  const auto altitudes = [&](const std::string& mesh, const std::string& extra) {
    const std::string out = body.dir + "/v.json";
    const CommandResult result = run_cli("validate " + arg(mesh) + " " + arg(body.dir + "/set.txt") +
                                         " --radii 2 --samples 20 " + extra + " --json " + arg(out));
    INFO(result.output);
    REQUIRE(result.exit_code == 0);
    // The shells only: the m file's checksum differs from the one the set records, which is warned about.
    return nlohmann::json::parse(read_bytes(out)).at("shells");
  };
  const nlohmann::json km = altitudes(body.km, "--unit km --altitudes 1");
  CHECK(km.dump().find("\"altitude_m\":1000.0") != std::string::npos);
  CHECK(altitudes(body.m, "--unit m --altitudes 1000") == km);
  CHECK(altitudes(body.km, "--altitudes 1000m") == km);  // --unit defaults to the set's km
  // The mesh file the set was computed from, declared in the other unit: refused, as report refuses it.
  const CommandResult contradiction =
      run_cli("validate " + arg(body.km) + " " + arg(body.dir + "/set.txt") + " --unit m --altitudes 1000");
  CHECK(contradiction.exit_code == 2);
  CHECK(contradiction.output.find("off by a factor 1000") != std::string::npos);
}

TEST_CASE("uncertainty gives the same sigmas for the same shape noise in m and in km", "[units_cli]") {
  const TwoUnits body;
  const std::string common = " --density 1900 --degree 4 --samples 4 --seed 3 --threads 1";
  const CoefficientSet km = body.run(
      "uncertainty " + arg(body.km) + " --unit km" + common + " --shape-sigma 0.005 --correlation-length 0.3",
      "ukm");
  const CoefficientSet m =
      body.run("uncertainty " + arg(body.m) + common + " --shape-sigma 5 --correlation-length 0.3km", "um");
  require_same_coefficients(km, m);
  CHECK(km.sigma_C(2, 0) > 0);
}

TEST_CASE("inspect reports the same mass properties for a body in m and in km", "[units_cli]") {
  const TwoUnits body;
  const CommandResult km = run_cli("inspect " + arg(body.km) + " --unit km --density 2.1g/cm3");
  const CommandResult m = run_cli("inspect " + arg(body.m) + " --density 2100");
  REQUIRE(km.exit_code == 0);
  REQUIRE(m.exit_code == 0);
  const auto line = [](const std::string& text, const std::string& label) {
    const size_t at = text.find("\n  " + label);
    return at == std::string::npos ? std::string() : text.substr(at, text.find('\n', at + 1) - at);
  };
  CHECK(!line(m.output, "mass").empty());
  CHECK(line(km.output, "mass") == line(m.output, "mass"));
  CHECK(line(km.output, "GM") == line(m.output, "GM"));
}

TEST_CASE("numbers stod would misread are usage errors in every numeric option (issue 10, defect 12)",
          "[units_cli]") {
  const TwoUnits body;
  const std::string mesh = arg(body.km);
  const std::string out = arg(body.dir + "/never.txt");
  for (const std::string bad : {"nan", "inf", "0x10", "' 1900'", "1e999", "1900kg"}) {
    for (const std::string& command :
         {"compute " + mesh + " --unit km --degree 2 --density " + bad + " -o " + out,
          "compute " + mesh + " --unit km --degree 2 --density 1900 --ref-radius " + bad + " -o " + out,
          "inspect " + mesh + " --density " + bad}) {
      const CommandResult result = run_cli(command);
      INFO(command << "\n" << result.output);
      CHECK(result.exit_code == 1);
      CHECK(!file_exists(body.dir + "/never.txt"));
    }
  }
  const CommandResult hex_degree = run_cli("compute " + mesh + " --density 1900 --degree 0x4 -o " + out);
  CHECK(hex_degree.exit_code == 1);
  CHECK(hex_degree.output.find("not a whole number") != std::string::npos);
}

TEST_CASE("implausible densities, radii and GM changes are warned about and recorded in the notes",
          "[units_cli]") {
  // Bounds: common practice (docs/units.md); a density of 1.9 is the classic g/cm^3 slip.
  const TwoUnits body;
  const std::string out = body.dir + "/slip.txt";
  const CommandResult slip =
      run_cli("compute " + arg(body.km) + " --unit km --density 1.9 --degree 4 -o " + arg(out));
  REQUIRE(slip.exit_code == 0);
  CHECK(slip.output.find("warning: the density of") != std::string::npos);
  CHECK(slip.output.find("g/cm^3") != std::string::npos);
  CHECK(read_bytes(out).find("Warning: the density of") != std::string::npos);
  // A 320-facet ellipsoid resolves about degree pi R / mean edge, near 13: degree 40 is far beyond.
  const CommandResult fine =
      run_cli("compute " + arg(body.km) + " --unit km --density 1900 --degree 40 -q -o " +
              arg(body.dir + "/fine.txt"));
  REQUIRE(fine.exit_code == 0);
  CHECK(fine.output.find("warning: degree 40 is far beyond") != std::string::npos);
  const CommandResult gm = run_cli("convert " + arg(out) + " --to-gm 5e-7 -o " + arg(body.dir + "/gm.txt"));
  REQUIRE(gm.exit_code == 0);
  CHECK(gm.output.find("warning: GM changes by a factor") != std::string::npos);
  const CommandResult radius =
      run_cli("convert " + arg(out) + " --to-ref-radius 1.5 -o " + arg(body.dir + "/r.txt"));  // m, not km
  REQUIRE(radius.exit_code == 0);
  CHECK(radius.output.find("factor near 1000") != std::string::npos);
}
