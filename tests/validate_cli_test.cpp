// End-to-end checks of `polystokes field` and `polystokes validate` on generated meshes and sets: series and
// exact columns agree outside the Brillouin sphere, warnings appear, bad input gives exit 2 and no file.
#include <fmt/format.h>

#include <catch2/catch.hpp>
#include <cmath>
#include <nlohmann/json.hpp>
#include <sstream>

#include "polystokes/core/constants.h"
#include "polystokes/field/polyhedron_gravity.h"
#include "polystokes/harmonics/compute.h"
#include "polystokes/io/coefficient_file.h"
#include "polystokes/io/mesh_io.h"
#include "polystokes/mesh/shapes.h"
#include "test_support.h"

using namespace polystokes;
using namespace polystokes::test;

namespace {

// Single-quoted for the shell that run_cli uses.
std::string shell_arg(const std::string& path) { return "'" + path + "'"; }

// Numeric rows of a CSV field table (header skipped).
std::vector<std::vector<double>> read_table(const std::string& path, std::string& header) {
  std::istringstream in(read_bytes(path));
  std::vector<std::vector<double>> rows;
  std::getline(in, header);
  std::string line;
  while (std::getline(in, line)) {
    std::vector<double> row;
    std::istringstream fields(line);
    std::string field;
    while (std::getline(fields, field, ',')) row.push_back(std::stod(field));
    rows.push_back(row);
  }
  return rows;
}

struct Fixture {
  std::string dir, mesh, set, points;
  Fixture() : dir(temp_directory()) {
    mesh = dir + "/ovoid.obj";
    // A smooth triaxial body written in km, off the origin, so units and the expansion origin matter.
    write_obj(transformed(make_ellipsoid(3, 1200.0, 900.0, 700.0), Eigen::Matrix3d::Identity(),
                          Eigen::Vector3d(300.0, -200.0, 100.0)),
              mesh, LengthUnit::kilometer);
    set = dir + "/ovoid.txt";
    const CommandResult compute =
        run_cli("compute " + shell_arg(mesh) + " --unit km --density 2100 --degree 24 -o " + shell_arg(set));
    INFO(compute.output);
    REQUIRE(compute.exit_code == 0);
    points = dir + "/points.csv";
    // Far points (> 2 R_B about the centre of mass), one near the surface inside the Brillouin sphere.
    // The header declares metres, so the points read the same whatever --unit the command is given.
    write_text(points, "x_m,y_m,z_m\n5000,0,0\n-1000,4000,2500\n300,-200,4800\n300,-200,950\n");
  }
};

}  // namespace

TEST_CASE(
    "field: series of a computed set and exact polyhedron gravity give the same columns and agree "
    "far out",
    "[validate_cli]") {
  const Fixture f;
  const CommandResult series = run_cli("field " + shell_arg(f.set) + " --points " + shell_arg(f.points) +
                                       " -o " + shell_arg(f.dir + "/series.csv") + " --gradient");
  CAPTURE(series.output);
  REQUIRE(series.exit_code == 0);
  CHECK(series.output.find("1 of 4 points lie inside the Brillouin sphere") != std::string::npos);
  const CommandResult exact =
      run_cli("field " + shell_arg(f.mesh) + " --unit km --density 2100 --points " + shell_arg(f.points) +
              " -o " + shell_arg(f.dir + "/exact.csv") + " --gradient --direct");
  CAPTURE(exact.output);
  REQUIRE(exact.exit_code == 0);
  std::string header_s, header_e;
  const auto s = read_table(f.dir + "/series.csv", header_s);
  const auto e = read_table(f.dir + "/exact.csv", header_e);
  CHECK(header_s ==
        "x_m,y_m,z_m,U_m2_s2,ax_m_s2,ay_m_s2,az_m_s2,Txx_per_s2,Txy_per_s2,Txz_per_s2,Tyy_per_s2,Tyz_per_s2,"
        "Tzz_per_s2");
  CHECK(header_e == header_s);
  REQUIRE(s.size() == 4);
  REQUIRE(e.size() == 4);
  for (size_t i = 0; i < 3; ++i) {  // the three far points
    CAPTURE(i);
    REQUIRE(s[i].size() == 13);
    CHECK(s[i][3] == Approx(e[i][3]).epsilon(1e-9));
    const Eigen::Vector3d as(s[i][4], s[i][5], s[i][6]), ae(e[i][4], e[i][5], e[i][6]);
    CHECK((as - ae).norm() <= 1e-8 * ae.norm());
    CHECK(std::abs(s[i][7] - e[i][7]) <= 1e-6 * std::abs(e[i][7]));
  }
  // The exact column equals the library directly (mesh read in km, points in metres).
  const Mesh mesh = read_mesh(f.mesh, MeshReadOptions{LengthUnit::kilometer, 0.0});
  const FieldValue direct =
      PolyhedronGravity({DensityRegion{mesh, 2100.0}}).evaluate(Eigen::Vector3d(5000, 0, 0));
  CHECK(e[0][3] == direct.potential);
  CHECK(e[0][4] == direct.acceleration.x());

  // --degree truncates; --set-frame takes points about the expansion origin.
  const CommandResult low = run_cli("field " + shell_arg(f.set) + " --degree 0 --points " +
                                    shell_arg(f.points) + " -o " + shell_arg(f.dir + "/low.csv"));
  REQUIRE(low.exit_code == 0);
  std::string header_low;
  const auto l = read_table(f.dir + "/low.csv", header_low);
  CHECK(header_low == "x_m,y_m,z_m,U_m2_s2,ax_m_s2,ay_m_s2,az_m_s2");
  const CoefficientSet set = read_coefficient_file(f.set);
  const double r = (Eigen::Vector3d(5000, 0, 0) - set.origin_in_mesh).norm();
  CHECK(l[0][3] == Approx(set.gm / r).epsilon(1e-15));  // degree 0 = point mass at the centre of mass
}

TEST_CASE("field: bad input is refused with one line, exit 2 and no output file", "[validate_cli]") {
  const Fixture f;
  const std::string out = f.dir + "/out.csv";
  write_text(f.dir + "/bad.csv", "x,y,z\n1,2,3\n4,five,6\n");
  CommandResult r = run_cli("field " + shell_arg(f.set) + " --points " + shell_arg(f.dir + "/bad.csv") +
                            " -o " + shell_arg(out));
  CAPTURE(r.output);
  CHECK(r.exit_code == 2);
  CHECK(r.output.find("bad.csv:3: field 2 ('five') is not a number") != std::string::npos);
  CHECK(!file_exists(out));
  r = run_cli("field " + shell_arg(f.mesh) + " --points " + shell_arg(f.points) + " -o " + shell_arg(out));
  CHECK(r.exit_code == 2);
  CHECK(r.output.find("1 meshes but 0 densities") != std::string::npos);
  r = run_cli("field " + shell_arg(f.set) + " --density 2000 --points " + shell_arg(f.points) + " -o " +
              shell_arg(out));
  CHECK(r.exit_code == 2);
  CHECK(r.output.find("--density applies to meshes only") != std::string::npos);
  write_text(f.dir + "/origin.csv", "0,0,0\n");
  r = run_cli("field " + shell_arg(f.set) + " --set-frame --points " + shell_arg(f.dir + "/origin.csv") +
              " -o " + shell_arg(out));
  CHECK(r.exit_code == 2);
  CHECK(r.output.find("point 1") != std::string::npos);
  CHECK(!file_exists(out));
}

TEST_CASE("validate: table, recommended degrees, Brillouin warning for a low altitude, JSON",
          "[validate_cli]") {
  const Fixture f;
  const std::string json = f.dir + "/v.json";
  const CommandResult r =
      run_cli("validate " + shell_arg(f.mesh) + " " + shell_arg(f.set) +
              " --radii 1.5,2,3 --altitudes 30m --samples 40 --target 1e-6 --json " + shell_arg(json));
  CAPTURE(r.output);
  REQUIRE(r.exit_code == 0);
  CHECK(r.output.find("densities taken from") != std::string::npos);  // --density and --unit from the set
  CHECK(r.output.find("recommended") != std::string::npos);
  CHECK(r.output.find("shell 'h = 30 m'") != std::string::npos);
  CHECK(r.output.find("inside the Brillouin sphere") != std::string::npos);
  CHECK(r.output.find("CAUTION") != std::string::npos);
  const auto j = nlohmann::json::parse(read_bytes(json));
  REQUIRE(j["shells"].size() == 4);
  CHECK(j["degree"] == 24);
  CHECK(j["shells"][0]["inside_brillouin"] == 0);
  CHECK(j["shells"][3]["inside_brillouin"].get<int>() > 0);
  // Farther spheres need no higher degree.
  const int d15 = j["shells"][0]["recommended_degree"], d2 = j["shells"][1]["recommended_degree"],
            d3 = j["shells"][2]["recommended_degree"];
  CHECK(d3 <= d2);
  CHECK(d2 <= d15);
  CHECK(j["shells"][1]["max_error"][d2].get<double>() <= 1e-6);
}

TEST_CASE("validate: a set without density regions needs --density; a wrong density is flagged",
          "[validate_cli]") {
  const Fixture f;
  CoefficientSet foreign = read_coefficient_file(f.set);
  foreign.regions.clear();
  const std::string bare = f.dir + "/bare.txt";
  write_coefficient_file(foreign, bare);
  CommandResult r =
      run_cli("validate " + shell_arg(f.mesh) + " " + shell_arg(bare) + " --unit km --samples 5");
  CAPTURE(r.output);
  CHECK(r.exit_code == 2);
  CHECK(r.output.find("records no density regions: give --density") != std::string::npos);
  r = run_cli("validate " + shell_arg(f.mesh) + " " + shell_arg(bare) +
              " --unit km --density 2000 --samples 5 --radii 2");
  CHECK(r.exit_code == 0);
  CHECK(r.output.find("the set's total GM") != std::string::npos);
}

TEST_CASE("validate: after convert --to-gm the same field gives the same errors and no GM warning",
          "[validate_cli]") {
  // Regression (issue 10, defect 8): the GM warning said "the errors below include that difference" while C00
  // = GM_old/GM_new kept the field, and the errors, unchanged. Expected: identical errors (the same exterior
  // field, docs/conventions.md: C_nm GM_old/GM_new), a note instead of a warning.
  const Fixture f;
  const std::string rescaled = f.dir + "/rescaled.txt";
  const CoefficientSet set = read_coefficient_file(f.set);
  CommandResult r = run_cli("convert " + shell_arg(f.set) + " --to-gm " + fmt::format("{}", set.gm * 1.5) +
                            " -o " + shell_arg(rescaled));
  CAPTURE(r.output);
  REQUIRE(r.exit_code == 0);
  const auto validate = [&](const std::string& which, const std::string& json) {
    const CommandResult v = run_cli("validate " + shell_arg(f.mesh) + " " + shell_arg(which) +
                                    " --radii 2 --samples 20 --json " + shell_arg(json));
    CAPTURE(v.output);
    REQUIRE(v.exit_code == 0);
    return v.output;
  };
  const std::string before = validate(f.set, f.dir + "/v1.json");
  const std::string after = validate(rescaled, f.dir + "/v2.json");
  CAPTURE(after);
  CHECK(before.find("GM") == before.find("GM set"));  // no GM sentence for the set as computed
  CHECK(after.find("the errors below include that difference") == std::string::npos);
  CHECK(after.find("note: the set's GM") != std::string::npos);
  CHECK(after.find("carries the ratio") != std::string::npos);
  const auto j1 = nlohmann::json::parse(read_bytes(f.dir + "/v1.json"));
  const auto j2 = nlohmann::json::parse(read_bytes(f.dir + "/v2.json"));
  CHECK(j2["warnings"].size() == j1["warnings"].size());
  const auto& e1 = j1["shells"][0]["max_error"];
  const auto& e2 = j2["shells"][0]["max_error"];
  REQUIRE(e1.size() == e2.size());
  for (size_t L = 0; L < e1.size(); ++L) {
    CAPTURE(L);
    // The same field but for the rounding of C_nm GM_old/GM_new: errors agree to far below their size.
    CHECK_THAT(e2[L].get<double>(), Catch::Matchers::WithinAbs(e1[L].get<double>(), 1e-13));
  }
}

TEST_CASE(
    "validate --surface-map writes the series' error at every facet; on a sphere the degree-0 series is "
    "the point mass GM/r^2 (Newton) and each error is |a_series - a_exact| / |a_exact|",
    "[validate_cli]") {
  const std::string dir = temp_directory();
  Mesh sphere = make_geodesic_sphere(6);
  sphere.vertices *= 900.0;
  const std::string mesh = dir + "/ball.obj", set = dir + "/ball.txt";
  write_obj(sphere, mesh, LengthUnit::meter);
  REQUIRE(
      run_cli("compute " + shell_arg(mesh) + " --density 2000 --degree 6 -o " + shell_arg(set)).exit_code ==
      0);
  const CommandResult run =
      run_cli("validate " + shell_arg(mesh) + " " + shell_arg(set) +
              " --surface-degree 0 --target 0.01 --surface-map " + shell_arg(dir + "/e.csv") +
              " --surface-map " + shell_arg(dir + "/e.ply"));
  CAPTURE(run.output);
  REQUIRE(run.exit_code == 0);
  CHECK(run.output.find("surface map: series to degree 0") != std::string::npos);
  CHECK(file_exists(dir + "/e.ply"));
  std::istringstream csv(read_bytes(dir + "/e.csv"));
  std::string line;
  while (std::getline(csv, line) && line.rfind("#", 0) == 0) {
  }
  CHECK(line ==
        "facet,centroid_x_m,centroid_y_m,centroid_z_m,radius_m,inside_brillouin,exact_x_m_s2,exact_y_m_s2,"
        "exact_z_m_s2,series_x_m_s2,series_y_m_s2,series_z_m_s2,relative_error,above_target");
  const double gm = gravitational_constant * 2000 * volume_of(sphere);
  long rows = 0;
  while (std::getline(csv, line)) {
    std::vector<double> v;
    std::istringstream fields(line);
    std::string field;
    while (std::getline(fields, field, ',')) v.push_back(std::stod(field));
    REQUIRE(v.size() == 14);
    // Set origin = centre of mass = the sphere's centre (to rounding), so r is the centroid's distance.
    const Eigen::Vector3d x(v[1], v[2], v[3]), exact(v[6], v[7], v[8]), series(v[9], v[10], v[11]);
    CHECK(v[4] == Approx(x.norm()).epsilon(1e-9));
    CHECK((series + gm * x / std::pow(x.norm(), 3)).norm() < 1e-9 * series.norm());
    CHECK(v[12] == Approx((series - exact).norm() / exact.norm()).epsilon(1e-12));
    CHECK(v[13] == (v[12] > 0.01 ? 1.0 : 0.0));
    CHECK(v[5] == 1.0);  // centroids of an inscribed mesh lie inside its Brillouin sphere
    ++rows;
  }
  CHECK(rows == sphere.faces.rows());
  // A bad map name is refused before any work, with no file written.
  const CommandResult bad = run_cli("validate " + shell_arg(mesh) + " " + shell_arg(set) + " --surface-map " +
                                    shell_arg(dir + "/e.txt") + " --json " + shell_arg(dir + "/v.json"));
  CHECK(bad.exit_code == 2);
  CHECK_FALSE(file_exists(dir + "/v.json"));
}

TEST_CASE("field and validate: the fast field by default within --accuracy of --direct; options refused where "
          "they do not apply",
          "[validate_cli]") {
  // Reference: the direct sum (Werner & Scheeres 1997) through --direct; the fast field must stay within its
  // stated accuracy of it, relative to max(|a|, GM/R_B^2) (R_B here about 1450 m, body centre to vertex).
  const Fixture f;
  const std::string base = "field " + shell_arg(f.mesh) + " --unit km --density 2100 --points " +
                           shell_arg(f.points) + " --gradient -o ";
  const CommandResult direct = run_cli(base + shell_arg(f.dir + "/direct.csv") + " --direct");
  const CommandResult fast = run_cli(base + shell_arg(f.dir + "/fast.csv") + " --accuracy 1e-8");
  CAPTURE(direct.output, fast.output);
  REQUIRE(direct.exit_code == 0);
  REQUIRE(fast.exit_code == 0);
  CHECK(direct.output.find("fast multipole") == std::string::npos);
  CHECK(fast.output.find("fast multipole method") != std::string::npos);
  CHECK(fast.output.find("accuracy 1.0e-08") != std::string::npos);
  std::string header_d, header_f;
  const auto d = read_table(f.dir + "/direct.csv", header_d);
  const auto e = read_table(f.dir + "/fast.csv", header_f);
  CHECK(header_d == header_f);
  REQUIRE(d.size() == e.size());
  const double gm = gravitational_constant * 2100.0 * (4.0 / 3.0) * M_PI * 1200.0 * 900.0 * 700.0;
  const double scale = gm / (1300.0 * 1300.0);  // smaller than GM/R_B^2: a stricter check
  for (size_t i = 0; i < d.size(); ++i) {
    const Eigen::Vector3d ad(d[i][4], d[i][5], d[i][6]), af(e[i][4], e[i][5], e[i][6]);
    CAPTURE(i);
    CHECK((ad - af).norm() <= 1e-8 * std::max(ad.norm(), scale));
  }
  // --accuracy with --direct is a usage error; --direct or --accuracy with a coefficient set is refused.
  CHECK(run_cli(base + shell_arg(f.dir + "/x.csv") + " --direct --accuracy 1e-6").exit_code == 1);
  const CommandResult on_set = run_cli("field " + shell_arg(f.set) + " --points " + shell_arg(f.points) +
                                       " -o " + shell_arg(f.dir + "/y.csv") + " --direct");
  CHECK(on_set.exit_code == 2);
  CHECK(on_set.output.find("--direct applies to meshes") != std::string::npos);
  CHECK(!file_exists(f.dir + "/x.csv"));
  CHECK(!file_exists(f.dir + "/y.csv"));
  // validate: the same errors table with the fast field as with --direct, up to the fast field's error (at 3
  // R_B |a| is GM/R_B^2 / 9, so 1e-10 of the scale is up to 1e-9 of |a|) and the printed 3 digits.
  const std::string validate = "validate " + shell_arg(f.mesh) + " " + shell_arg(f.set) + " --samples 40";
  const CommandResult v_direct = run_cli(validate + " --direct");
  const CommandResult v_fast = run_cli(validate);
  REQUIRE(v_direct.exit_code == 0);
  REQUIRE(v_fast.exit_code == 0);
  CHECK(v_fast.output.find("the exact field by the fast multipole method") != std::string::npos);
  const auto numbers = [](const std::string& text) {
    std::istringstream in(text.substr(text.find("degree       1 R_B")));
    std::string line;
    std::vector<double> out;
    std::getline(in, line);
    while (std::getline(in, line) && line.find('(') == std::string::npos) {
      std::istringstream row(line);
      std::string cell;
      while (row >> cell) out.push_back(std::stod(cell));
    }
    return out;
  };
  const std::vector<double> a = numbers(v_fast.output), b = numbers(v_direct.output);
  REQUIRE(a.size() == b.size());
  REQUIRE(a.size() > 100);
  for (size_t i = 0; i < a.size(); ++i) {
    CAPTURE(i, a[i], b[i]);
    CHECK(std::abs(a[i] - b[i]) <= 1e-9 + 0.01 * std::max(a[i], b[i]));
  }
}

TEST_CASE("field at the vertices of a torus is finite (the direct sum gave NaN there)", "[validate_cli]") {
  // Defect: at a vertex the height of an incident edge rounds to ~1e-16 instead of 0 and met the infinite
  // edge factor, so the potential and acceleration came out NaN. Expected: U and a are finite and continuous
  // at a vertex (Werner & Scheeres 1997, sec. 2.5): equal to the values 1e-7 m away to 1e-9.
  const std::string dir = temp_directory();
  const Mesh ring = torus_mesh(1000.0, 300.0, 64, 24);
  write_obj(ring, dir + "/torus.obj", LengthUnit::meter);
  std::string csv = "x_m,y_m,z_m\n";
  for (const int v : {0, 1, 37, 500}) {
    const Eigen::Vector3d p = ring.vertices.row(v).transpose();
    csv += fmt::format("{:.17g},{:.17g},{:.17g}\n", p.x(), p.y(), p.z());
    csv += fmt::format("{:.17g},{:.17g},{:.17g}\n", p.x() * (1 + 1e-10), p.y(), p.z());
  }
  write_text(dir + "/points.csv", csv);
  for (const std::string method : {" --direct", ""}) {
    const CommandResult r = run_cli("field " + shell_arg(dir + "/torus.obj") + " --density 2000 --points " +
                                    shell_arg(dir + "/points.csv") + " -o " + shell_arg(dir + "/f.csv") + method);
    CAPTURE(method, r.output);
    REQUIRE(r.exit_code == 0);
    std::string header;
    const auto rows = read_table(dir + "/f.csv", header);
    REQUIRE(rows.size() == 8);
    for (size_t i = 0; i < rows.size(); i += 2) {
      CAPTURE(i);
      for (int c = 3; c <= 6; ++c) {
        REQUIRE(std::isfinite(rows[i][size_t(c)]));
        CHECK(std::abs(rows[i][size_t(c)] - rows[i + 1][size_t(c)]) <= 1e-9 * std::abs(rows[i][3]) / 1000.0 +
                                                                          1e-9 * std::abs(rows[i][size_t(c)]));
      }
    }
  }
}
