// `polystokes convert --shift` and `compute --origin X,Y,Z` end to end: a far shift at high degree states its
// rounding loss, and computing about the point directly avoids it (issue 10, defect 13).
#include <catch2/catch.hpp>
#include <cmath>

#include "polystokes/io/coefficient_file.h"
#include "polystokes/io/mesh_io.h"
#include "polystokes/mesh/shapes.h"
#include "test_support.h"

using namespace polystokes;
using namespace polystokes::test;

namespace {
std::string arg(const std::string& path) { return "'" + path + "'"; }

double worst_relative_difference(const CoefficientSet& a, const CoefficientSet& b, int from_degree) {
  double worst = 0;
  for (int n = from_degree; n <= a.degree; ++n) {
    double diff = 0, rms = 0;
    for (int m = 0; m <= n; ++m) {
      diff += std::pow(a.C(n, m) - b.C(n, m), 2) + std::pow(a.S(n, m) - b.S(n, m), 2);
      rms += std::pow(b.C(n, m), 2) + std::pow(b.S(n, m), 2);
    }
    worst = std::max(worst, std::sqrt(diff / rms));
  }
  return worst;
}
}  // namespace

TEST_CASE("a far shift at degree 70 says how much accuracy it lost; compute --origin does not lose it",
          "[transforms_cli]") {
  // Reference for both: the set computed about the new origin from the mesh (exact to 1e-13, harmonics
  // tests).
  const std::string dir = temp_directory();
  const std::string mesh = dir + "/long.obj";
  write_obj(make_ellipsoid(4, 1800.0, 900.0, 700.0), mesh, LengthUnit::kilometer);
  const std::string common = " --unit km --density 2000 --degree 70 --ref-radius 2 -q ";
  REQUIRE(run_cli("compute " + arg(mesh) + common + "-o " + arg(dir + "/com.txt")).exit_code == 0);
  // 0.75 of the Brillouin radius (1.8 km) across the long axis: the far tips stay near 2.25 km from the new
  // origin while the terms grow like 3.15 km, so rounding grows like 1.4^n.
  const CommandResult shifted = run_cli("convert " + arg(dir + "/com.txt") +
                                        " --shift 0,1.35,0 --unit km -o " + arg(dir + "/shifted.txt"));
  INFO(shifted.output);
  REQUIRE(shifted.exit_code == 0);
  CHECK(shifted.output.find("Accuracy after the origin shift") != std::string::npos);
  const CoefficientSet shifted_set = read_coefficient_file(dir + "/shifted.txt");
  CHECK(shifted_set.notes.back().find("compute --origin X,Y,Z") != std::string::npos);
  REQUIRE(run_cli("compute " + arg(mesh) + common + "--origin 0m,1350m,0m -o " + arg(dir + "/direct.txt"))
              .exit_code == 0);
  const CoefficientSet direct = read_coefficient_file(dir + "/direct.txt");
  CHECK(to_string(direct.origin) == "point");
  CHECK(direct.origin_in_mesh == Eigen::Vector3d(0, 1350, 0));
  CHECK(worst_relative_difference(shifted_set, direct, 2) > 1e-10);  // the loss the note speaks of is real
}

TEST_CASE("convert --max-degree keeps degrees 0..N bit for bit and refuses a degree the set does not have",
          "[transforms_cli]") {
  // A cut series is the same series summed to N (common practice): the kept coefficients must be the input's.
  const std::string dir = temp_directory();
  const std::string mesh = dir + "/body.obj";
  write_obj(make_ellipsoid(3, 1800.0, 900.0, 700.0), mesh, LengthUnit::kilometer);
  REQUIRE(
      run_cli("compute " + arg(mesh) + " --unit km --density 2000 --degree 8 -q -o " + arg(dir + "/d8.txt"))
          .exit_code == 0);
  const CommandResult cut =
      run_cli("convert " + arg(dir + "/d8.txt") + " --max-degree 3 -o " + arg(dir + "/d3.txt"));
  REQUIRE(cut.exit_code == 0);
  const CoefficientSet full = read_coefficient_file(dir + "/d8.txt");
  const CoefficientSet part = read_coefficient_file(dir + "/d3.txt");
  REQUIRE(part.degree == 3);
  CHECK(part.C == full.C.topLeftCorner(4, 4));
  CHECK(part.S == full.S.topLeftCorner(4, 4));
  CHECK(part.gm == full.gm);
  CHECK(part.reference_radius == full.reference_radius);
  CHECK_THAT(cut.output, Catch::Contains("degree cut from 8 to 3"));

  const CommandResult too_high =
      run_cli("convert " + arg(dir + "/d8.txt") + " --max-degree 9 -o " + arg(dir + "/d9.txt"));
  CHECK(too_high.exit_code == 2);
  CHECK_THAT(too_high.output, Catch::Contains("cannot cut a set of degree 8 at degree 9"));
  CHECK_FALSE(file_exists(dir + "/d9.txt"));
  CHECK(
      run_cli("convert " + arg(dir + "/d8.txt") + " --max-degree -1 -o " + arg(dir + "/dm.txt")).exit_code ==
      1);
}
