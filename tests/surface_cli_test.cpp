// End-to-end checks of `polystokes surface`: the PLY, CSV and JSON files against closed forms and each other,
// the echo of the spin, and bad input refused with exit code 2 and no file.
#include <Eigen/Geometry>
#include <catch2/catch.hpp>
#include <cmath>
#include <nlohmann/json.hpp>
#include <sstream>

#include "polystokes/core/constants.h"
#include "polystokes/io/mesh_io.h"
#include "polystokes/io/surface_file.h"
#include "polystokes/mesh/mass_properties.h"
#include "polystokes/mesh/shapes.h"
#include "test_support.h"

using namespace polystokes;
using namespace polystokes::test;

namespace {

std::string shell_arg(const std::string& path) { return "'" + path + "'"; }

/// A sphere of radius 1 km as an OBJ in km, and its mesh in metres.
Mesh write_sphere(const std::string& path) {
  Mesh sphere = make_geodesic_sphere(8);
  sphere.vertices *= 1000.0;
  write_obj(sphere, path, LengthUnit::kilometer);
  return sphere;
}

}  // namespace

TEST_CASE(
    "surface writes PLY, CSV and JSON that agree; slopes of a rotating sphere follow the closed form of "
    "gravity plus centrifugal acceleration (common practice)",
    "[surface_cli]") {
  const std::string dir = temp_directory();
  const Mesh sphere = write_sphere(dir + "/ball.obj");
  const CommandResult run =
      run_cli("surface " + shell_arg(dir + "/ball.obj") + " --unit km --density 2g/cm3 --spin-period 3h " +
              "--no-equilibrium -o " + shell_arg(dir + "/s.ply") + " -o " + shell_arg(dir + "/s.csv") +
              " -o " + shell_arg(dir + "/s.json"));
  CAPTURE(run.output);
  REQUIRE(run.exit_code == 0);
  CHECK(run.output.find("10800 s (given as 3 h)") != std::string::npos);
  CHECK(run.output.find("default: mesh z axis, right-handed") != std::string::npos);
  CHECK(run.output.find("CAUTION") != std::string::npos);

  // The PLY is a mesh any reader takes: ours reads back the same vertices (written as doubles) and faces.
  MeshReadOptions metres;
  const Mesh back = read_mesh(dir + "/s.ply", metres);
  REQUIRE(back.faces.rows() == sphere.faces.rows());
  CHECK((back.vertices - sphere.vertices).cwiseAbs().maxCoeff() < 1e-9);

  // CSV: a header naming each column with its unit, one row per facet.
  std::istringstream csv(read_bytes(dir + "/s.csv"));
  std::string line, header;
  while (std::getline(csv, line) && line.rfind("#", 0) == 0) {
  }
  header = line;
  CHECK(header.find("slope_deg") != std::string::npos);
  CHECK(header.find("dynamic_height_m") != std::string::npos);
  CHECK(header.find("g_total_x_m_s2") != std::string::npos);
  std::vector<std::string> names;
  {
    std::istringstream fields(header);
    std::string name;
    while (std::getline(fields, name, ',')) names.push_back(name);
  }
  auto column = [&](const std::string& name) {
    return size_t(std::find(names.begin(), names.end(), name) - names.begin());
  };
  const double rho = 2000, gm = gravitational_constant * rho * mass_properties({{sphere, 1.0}}).volume;
  const double w2 = std::pow(2 * M_PI / 10800, 2);
  long rows = 0;
  double worst = 0;
  const nlohmann::json doc = nlohmann::json::parse(read_bytes(dir + "/s.json"));
  while (std::getline(csv, line)) {
    std::vector<double> v;
    std::istringstream fields(line);
    std::string field;
    while (std::getline(fields, field, ',')) v.push_back(std::stod(field));
    REQUIRE(v.size() == names.size());
    const Eigen::Vector3d x(v[column("centroid_x_m")], v[column("centroid_y_m")], v[column("centroid_z_m")]);
    const Eigen::Vector3d n(v[column("normal_x")], v[column("normal_y")], v[column("normal_z")]);
    const Eigen::Vector3d total = -gm * x / std::pow(x.norm(), 3) + w2 * Eigen::Vector3d(x.x(), x.y(), 0);
    const double expected = std::atan2(total.cross(-n).norm(), total.dot(-n)) * 180 / M_PI;
    worst = std::max(worst, std::abs(v[column("slope_deg")] - expected));
    // The JSON holds the same numbers (both round-trip doubles).
    CHECK(doc["facets"]["slope_deg"][size_t(rows)].get<double>() == v[column("slope_deg")]);
    ++rows;
  }
  CHECK(rows == sphere.faces.rows());
  CHECK(worst < 0.2);  // second-order discretisation error of 1280 facets (0.14 deg measured)
  CHECK(doc["spin"]["period_s"].get<double>() == 10800);
  double shares = 0;
  for (const auto& share : doc["statistics"]["slope_deg"]["histogram"]["area_fraction"])
    shares += share.get<double>();
  CHECK(shares == Approx(1.0).epsilon(1e-12));
  CHECK_FALSE(doc.contains("equilibrium_points"));
}

TEST_CASE("surface finds the four equilibrium points of a rotating triaxial ellipsoid and lists them",
          "[surface_cli]") {
  // Symmetry of a homogeneous triaxial ellipsoid spinning about its short axis puts them on the long and
  // intermediate axes in pairs (common practice); their places against the closed-form potential are checked
  // in surface_environment_test.
  const std::string dir = temp_directory();
  write_obj(make_ellipsoid(3, 1000, 700, 500), dir + "/egg.obj", LengthUnit::meter);
  const CommandResult run = run_cli("surface " + shell_arg(dir + "/egg.obj") +
                                    " --density 2000 --spin-period 7h -o " + shell_arg(dir + "/e.json"));
  CAPTURE(run.output);
  REQUIRE(run.exit_code == 0);
  const nlohmann::json doc = nlohmann::json::parse(read_bytes(dir + "/e.json"));
  const auto& points = doc["equilibrium_points"]["points"];
  REQUIRE(points.size() == 4);
  for (const auto& p : points) {
    const double x = p["position_m"][0], y = p["position_m"][1], z = p["position_m"][2];
    CHECK(std::abs(z) < 1e-6);
    CHECK(std::min(std::abs(x), std::abs(y)) < 1e-6 * std::max(std::abs(x), std::abs(y)));
  }
  CHECK(run.output.find("E4") != std::string::npos);
}

TEST_CASE("surface refuses bad input with exit code 2, one line, and writes no file", "[surface_cli]") {
  const std::string dir = temp_directory();
  write_sphere(dir + "/ball.obj");
  const std::string ball = shell_arg(dir + "/ball.obj") + " --unit km --density 2000 --no-equilibrium ";
  const std::string good = shell_arg(dir + "/ok.csv");
  for (const std::string& bad :
       {std::string("--spin-period 0 -o ") + good, std::string("--spin-period -4h -o ") + good,
        std::string("--spin-period 4h --spin-axis 0,0,0 -o ") + good,
        std::string("--spin-period 4h -o ") + good + " -o " + shell_arg(dir + "/out.txt"),
        std::string("--spin-period 4h -o ") + good + " -o " + good}) {
    CAPTURE(bad);
    const CommandResult run = run_cli("surface " + ball + bad);
    CAPTURE(run.output);
    CHECK(run.exit_code == 2);
    CHECK(run.output.find("error:") != std::string::npos);
    CHECK_FALSE(file_exists(dir + "/ok.csv"));
  }
}
