// Tests of the HTML report and its SVG helpers: the page is well-formed XML with every section, plot, number
// and caution, and no external reference; degree variances and the power-law fit follow their definitions and
// agree with GSL (tests/spectrum_test.cpp); the field map matches the point-mass and degree-2 closed forms;
// contours match geometry.
#include "polystokes/render/report.h"

#include <fmt/format.h>

#include <Eigen/Dense>
#include <Eigen/Geometry>
#include <catch2/catch.hpp>
#include <cmath>
#include <cstdio>

#include "polystokes/sets/compare.h"
#include "polystokes/sets/conventions.h"
#include "polystokes/core/errors.h"
#include "polystokes/core/constants.h"
#include "polystokes/harmonics/compute.h"
#include "polystokes/field/equilibrium_points.h"
#include "polystokes/field/surface_environment.h"
#include "polystokes/mesh/mass_properties.h"
#include "polystokes/mesh/shapes.h"
#include "render/svg_plot.h"
#include "test_support.h"
#include "xml_check.h"

using namespace polystokes;
using polystokes::test::power_law_set;
using Catch::Matchers::WithinRel;

namespace {

const double pi = std::acos(-1.0);

size_t count(const std::string& haystack, const std::string& needle) {
  size_t found = 0;
  for (size_t at = haystack.find(needle); at != std::string::npos;
       at = haystack.find(needle, at + needle.size()))
    ++found;
  return found;
}

// The text of <section id="ID"> ... </section> (sections do not nest in the report).
std::string section(const std::string& html, const std::string& id) {
  const size_t start = html.find("<section id=\"" + id + "\"");
  if (start == std::string::npos) return {};
  return html.substr(start, html.find("</section>", start) - start);
}

// Pixel points (x, y) of the plotted series drawn in `color`: the path "M x y L x y ..." the SVG plot writes.
std::vector<Eigen::Vector2d> series_points(const std::string& svg, const std::string& color) {
  const size_t style = svg.find("\" fill=\"none\" stroke=\"" + color + "\"");
  if (style == std::string::npos) return {};
  const size_t start = svg.rfind("<path d=\"", style) + 9;
  std::vector<Eigen::Vector2d> points;
  for (const char* at = svg.c_str() + start; at < svg.c_str() + style;) {
    while (*at == ' ' || *at == 'M' || *at == 'L') ++at;
    Eigen::Vector2d p;
    int used = 0;
    if (std::sscanf(at, "%lf %lf%n", &p.x(), &p.y(), &used) != 2) break;
    points.push_back(p);
    at += used;
  }
  return points;
}

// A lumpy-free but tilted triaxial body with 20480 faces, away from the mesh origin, and its set.
struct Body {
  Mesh mesh;
  CoefficientSet set;
};
const Body& test_body() {
  static const Body body = [] {
    const Eigen::Matrix3d rotation =
        (Eigen::AngleAxisd(0.4, Eigen::Vector3d::UnitZ()) * Eigen::AngleAxisd(0.25, Eigen::Vector3d::UnitX()))
            .toRotationMatrix();
    Mesh mesh = transformed(make_ellipsoid(5, 1800, 1200, 900), rotation, Eigen::Vector3d(150, -80, 40));
    mesh.source = "tilted-ellipsoid.obj";
    ComputeOptions options;
    options.degree = 8;
    options.body = "Tessa";
    const CoefficientSet set = compute_coefficients({DensityRegion{mesh, 2100.0}}, options);
    return Body{mesh, set};
  }();
  return body;
}

std::string body_report() {
  static const std::string html = [] {
    ReportInput input;
    input.set = test_body().set;
    input.set_source = "tessa.txt";
    input.mesh = test_body().mesh;
    input.generated = "polystokes test";
    return make_report(input);
  }();
  return html;
}

}  // namespace

TEST_CASE("the XML check accepts well-formed documents and rejects broken ones (W3C XML 1.0, 2008)",
          "[report]") {
  using polystokes::test::xml_problem;
  CHECK(xml_problem(
            "<!DOCTYPE html>\n<html><body a=\"1\" b='2'><br/>x &amp; &#955; &#x3bb;<!-- c --></body></html>")
            .empty());
  CHECK(!xml_problem("<a><b></a></b>").empty());
  CHECK(!xml_problem("<a><b></b>").empty());
  CHECK(!xml_problem("<a x=\"1\" x=\"2\"/>").empty());
  CHECK(!xml_problem("<a x=1/>").empty());
  CHECK(!xml_problem("<a>&nbsp;</a>").empty());
  CHECK(!xml_problem("<a>1 < 2</a>").empty());
  CHECK(!xml_problem("<a/><b/>").empty());
  CHECK(!xml_problem("<a>\x01</a>").empty());
  CHECK(!xml_problem("<a>\xff</a>").empty());
  CHECK(!xml_problem("<a><!-- a -- b --></a>").empty());
}

TEST_CASE("the radial-acceleration map of a point mass is -GM/r^2 everywhere (Newton)", "[report]") {
  CoefficientSet set = make_empty_set(0);
  set.gm = 3.5e5;
  set.reference_radius = 900;
  set.C(0, 0) = 1;
  const FieldMap map = radial_acceleration_map(set, 2000, 12, 6);
  REQUIRE(map.values.size() == 72);
  for (double v : map.values) CHECK_THAT(v, WithinRel(-3.5e5 / 4e6, 1e-14));
  CHECK_THROWS_AS(radial_acceleration_map(set, 0, 12, 6), ConventionError);
  CHECK_THROWS_AS(radial_acceleration_map(set, 2000, 0, 6), ConventionError);
}

TEST_CASE(
    "the radial-acceleration map of a degree-2 field matches the differentiated closed form at each cell "
    "centre (IERS Conventions 2010, ch. 6 series and normalization)",
    "[report]") {
  // U = GM/r [1 + (R/r)^2 (C20 sqrt(5) P2(sin lat) + (sqrt(15)/2) cos^2 lat (C22 cos 2 lon + S22 sin 2
  // lon))], so g_r = dU/dr = -GM/r^2 [1 + 3 (R/r)^2 (...)].
  CoefficientSet set = make_empty_set(2);
  set.gm = 2e5;
  set.reference_radius = 1000;
  set.C(0, 0) = 1;
  set.C(2, 0) = -0.05;
  set.C(2, 2) = 0.02;
  set.S(2, 2) = -0.011;
  const double r = 1500;
  const FieldMap map = radial_acceleration_map(set, r, 72, 36);
  REQUIRE(map.columns == 72);
  REQUIRE(map.rows == 36);
  double low = 1, high = -1;
  for (int row = 0; row < 36; ++row) {
    for (int col = 0; col < 72; ++col) {
      const double lat = (90 - (row + 0.5) * 5) * pi / 180;
      const double lon = (-180 + (col + 0.5) * 5) * pi / 180;
      const double s = std::sin(lat), c = std::cos(lat);
      const double shape =
          set.C(2, 0) * std::sqrt(5.0) * (3 * s * s - 1) / 2 +
          std::sqrt(15.0) / 2 * c * c * (set.C(2, 2) * std::cos(2 * lon) + set.S(2, 2) * std::sin(2 * lon));
      const double expected = -set.gm / (r * r) * (1 + 3 * std::pow(1000 / r, 2) * shape);
      CAPTURE(row, col);
      CHECK_THAT(map.values[size_t(row) * 72 + col], WithinRel(expected, 1e-12));
      low = std::min(low, expected);
      high = std::max(high, expected);
    }
  }
  CHECK_THAT(map.min, WithinRel(low, 1e-12));
  CHECK_THAT(map.max, WithinRel(high, 1e-12));
}

TEST_CASE(
    "the report of a computed set with its 20k-face mesh is well-formed XML with every section and plot",
    "[report]") {
  const std::string html = body_report();
  INFO("report size " << html.size() << " bytes");
  CHECK(polystokes::test::xml_problem(html) == "");
  CHECK(html.size() < 2'000'000);
  CHECK(html.rfind("<!DOCTYPE html>", 0) == 0);
  for (const char* id : {"provenance", "mass", "spectrum", "coefficients", "shape", "field"}) {
    CAPTURE(id);
    CHECK(!section(html, id).empty());
  }
  CHECK(count(section(html, "spectrum"), "<svg") == 1);
  CHECK(count(section(html, "shape"), "<svg") == 3);
  CHECK(count(section(html, "field"), "<svg") == 1);
  CHECK(count(html, "<svg") == 5);
  CHECK(count(html, "<title>") == 6);  // page title and one per plot
  CHECK(count(html, "<figcaption>") >= 5);
  // Axes and units.
  CHECK(section(html, "spectrum").find("degree n") != std::string::npos);
  CHECK(count(section(html, "shape"), "(km)</text>") == 6);
  CHECK(section(html, "field").find("longitude (degrees") != std::string::npos);
  CHECK(section(html, "field").find("m s\u207b\u00b2") != std::string::npos);
  // Silhouettes: an outline path, the Brillouin circle and three principal axes per view.
  CHECK(count(section(html, "shape"), "-body\"><path d=\"M") == 3);
  CHECK(count(section(html, "shape"), "stroke=\"#7b3fa0\"") >= 3);
  CHECK(count(section(html, "shape"), "stroke-width=\"1.6\"/>") == 9);
  // The field map: 72 x 36 cells and a colour bar.
  CHECK(count(section(html, "field"), "<rect x=") >= 72 * 36);
  CHECK(section(html, "field").find("<linearGradient") != std::string::npos);
}

TEST_CASE("the report shows GM, reference radius, C20, the fitted law and mesh mass properties as computed",
          "[report]") {
  const std::string html = body_report();
  const CoefficientSet& set = test_body().set;
  CHECK(html.find(fmt::format("{}", set.gm)) != std::string::npos);
  CHECK(html.find(fmt::format("{}", set.reference_radius)) != std::string::npos);
  CHECK(section(html, "coefficients").find(fmt::format("{:.9e}", set.C(2, 0))) != std::string::npos);
  CHECK(section(html, "coefficients").find(fmt::format("{:.9e}", set.C(4, 4))) != std::string::npos);
  const PowerLaw law = fit_power_law(degree_spectrum(set).variance, 2);
  CHECK(section(html, "spectrum").find(fmt::format("{:.6f}", law.beta)) != std::string::npos);
  const MassProperties props = mass_properties({DensityRegion{test_body().mesh, 2100.0}});
  CHECK(section(html, "mass").find(fmt::format("{:.9g}", props.mass)) != std::string::npos);
  CHECK(section(html, "mass").find("matches") == std::string::npos);  // a generated mesh has no checksum
  for (const auto& line : set.history) CHECK(html.find(svg::escape(line)) != std::string::npos);
  for (const auto& note : set.notes) CHECK(html.find(svg::escape(note)) != std::string::npos);
}

TEST_CASE(
    "the centre of mass implied by the degree-1 terms of a set about the mesh origin is the body's "
    "(dipole term of the exterior expansion, common practice)",
    "[report]") {
  ComputeOptions options;
  options.degree = 2;
  options.origin = OriginKind::mesh;
  ReportInput input;
  input.set = compute_coefficients({DensityRegion{test_body().mesh, 2100.0}}, options);
  const std::string mass = section(make_report(input), "mass");
  const size_t row = mass.find("implied by the degree-1 terms");
  REQUIRE(row != std::string::npos);
  const size_t open = mass.find('(', mass.find("<td>", row));
  Eigen::Vector3d shown;
  REQUIRE(std::sscanf(mass.c_str() + open, "(%lf, %lf, %lf)", &shown[0], &shown[1], &shown[2]) == 3);
  const Eigen::Vector3d expected = mass_properties({DensityRegion{test_body().mesh, 2100.0}}).center_of_mass;
  CAPTURE(shown.transpose(), expected.transpose());
  CHECK((shown - expected).norm() < 1e-6 * expected.norm());
  CHECK(expected.norm() > 100);
}

TEST_CASE("the report carries the operational caution at the top, at the end and on every printed page",
          "[report]") {
  const std::string html = body_report();
  // The box shows the caution's own "CAUTION:" label in bold; the sentence after it appears verbatim.
  const std::string text = operational_caution();
  const std::string caution = svg::escape(text.substr(text.find(':') + 1));
  CHECK(caution.size() > 100);
  CHECK(count(html, caution) >= 3);
  CHECK(html.find(caution) < html.find("<section"));
  CHECK(html.rfind(caution) > html.rfind("</section>"));
  CHECK(html.find("position: fixed") != std::string::npos);
}

TEST_CASE("the report references nothing outside itself: no scripts, links or URLs but the SVG namespace",
          "[report]") {
  const std::string html = body_report();
  CHECK(count(html, "http") == count(html, "http://www.w3.org/2000/svg"));
  CHECK(html.find("<script") == std::string::npos);
  CHECK(html.find("<link") == std::string::npos);
  CHECK(html.find(" src=") == std::string::npos);
  CHECK(html.find("href") == std::string::npos);
  CHECK(count(html, "url(") == count(html, "url(#"));
}

TEST_CASE("the report escapes markup and shows bytes that are not UTF-8 in text fields", "[report]") {
  CoefficientSet set = power_law_set(6, 1e-3, 3);
  set.body = "<b>Q&A \"x\" 'y'</b>\x01\xff";
  set.history = {"converted ]]> <script>"};
  set.notes = {"note with \xc3\xa9 and \xed\xa0\x80"};
  ReportInput input;
  input.set = set;
  input.set_source = "odd & name.txt";
  const std::string html = make_report(input);
  CHECK(polystokes::test::xml_problem(html) == "");
  CHECK(html.find("&lt;b&gt;Q&amp;A &quot;x&quot; &#39;y&#39;&lt;/b&gt;\\x01\\xff") != std::string::npos);
  CHECK(html.find("converted ]]&gt; &lt;script&gt;") != std::string::npos);
  CHECK(html.find("note with \xc3\xa9 and \\xed\\xa0\\x80") != std::string::npos);
  CHECK(html.find("odd &amp; name.txt") != std::string::npos);
  CHECK(section(html, "shape").empty());
  CHECK(count(html, "<svg") == 2);
}

TEST_CASE(
    "the coefficient table shows fully normalized values of a set stored unnormalized with J_n "
    "(IERS Conventions 2010, ch. 6: C20 = -J2 / sqrt(5))",
    "[report]") {
  CoefficientSet set = power_law_set(4, 1e-3, 3);
  set.convention.normalization = Normalization::unnormalized;
  set.convention.zonal_as_j = true;
  set.C(2, 0) = 0.0123;  // J2
  ReportInput input;
  input.set = set;
  const std::string table = section(make_report(input), "coefficients");
  CHECK(table.find(fmt::format("{:.9e}", -0.0123 / std::sqrt(5.0))) != std::string::npos);
  CHECK(table.find("stored C") != std::string::npos);
  CHECK(table.find(fmt::format("{:.9e}", 0.0123)) != std::string::npos);
}

TEST_CASE("the spectrum shows the sigma spectrum when sigmas are non-zero, and low degrees are handled",
          "[report]") {
  CoefficientSet set = power_law_set(10, 1e-3, 3);
  ReportInput input;
  input.set = set;
  CHECK(section(make_report(input), "spectrum").find("error variance") == std::string::npos);
  for (int n = 2; n <= 10; ++n) input.set.sigma_C(n, 0) = 1e-3 * set.C(n, 0);
  const std::string html = make_report(input);
  CHECK(section(html, "spectrum").find("error variance") != std::string::npos);
  CHECK(count(section(html, "spectrum"), "stroke=\"#c0392b\"") >= 1);

  input.set = power_law_set(1, 1e-3, 3);
  const std::string low = make_report(input);
  CHECK(polystokes::test::xml_problem(low) == "");
  CHECK(section(low, "spectrum").find("no spectrum") != std::string::npos);
}

TEST_CASE("the comparison section plots per-degree differences and names a known mangling (C and S swapped)",
          "[report]") {
  ReportInput input;
  input.set = test_body().set;
  CoefficientSet swapped = input.set;
  for (int n = 1; n <= swapped.degree; ++n)
    for (int m = 1; m <= n; ++m) std::swap(swapped.C(n, m), swapped.S(n, m));
  input.other = swapped;
  input.other_source = "other-team.txt";
  const std::string html = make_report(input);
  CHECK(polystokes::test::xml_problem(html) == "");
  const std::string part = section(html, "comparison");
  REQUIRE(!part.empty());
  CHECK(count(part, "<svg") == 1);
  CHECK(part.find("A \u2212 B") != std::string::npos);
  CHECK(part.find("other-team.txt") != std::string::npos);
  CHECK(part.find("verdict disagree") != std::string::npos);
  CHECK(part.find(svg::escape(compare_sets(input.set, swapped).verdict)) != std::string::npos);
  // The best explanation is listed first and marked: the swap that was made.
  const size_t first_row = part.find("<tr", part.find("<th>explains all</th>"));
  const std::string best_row = "<tr class=\"best\"><td>swapped_cs</td>";
  CHECK(part.compare(first_row, best_row.size(), best_row) == 0);

  input.other = input.set;
  const std::string same = section(make_report(input), "comparison");
  CHECK(same.find("verdict agree") != std::string::npos);
  CHECK(same.find("identical at every degree") != std::string::npos);
  CHECK(same.find("<h3>Diagnosis</h3>") == std::string::npos);
}

TEST_CASE(
    "the comparison plot draws the agreement threshold at tolerance x the scale compare_sets measures each "
    "degree against, so the difference is below it exactly where compare says the degree agrees",
    "[report]") {
  // Consistency between two outputs of the program: the report's plot and compare's per-degree verdicts
  // (the scale in compare.h). The tilted ellipsoid about its centre of mass has odd degrees at rounding
  // level, where the scale is the spectrum floor rather than the RMS of A or of B.
  ReportInput input;
  input.set = test_body().set;
  input.other_source = "perturbed.txt";
  CoefficientSet other = input.set;
  other.C(3, 1) = 1e-5;       // a term A lacks: differs
  other.C(5, 1) += 1e-14;     // above rounding, far below tolerance x floor of a vanishing degree: agrees
  other.C(6, 0) *= 1 + 1e-3;  // differs
  other.C(8, 4) *= 1 + 1e-9;  // agrees
  input.other = other;
  const Comparison c = compare_sets(input.set, other, input.compare_options);
  const std::string part = section(make_report(input), "comparison");
  REQUIRE(!part.empty());
  const auto threshold = series_points(part, "#777777");
  const auto a = series_points(part, "#1f5fa8");
  const auto difference = series_points(part, "#c0392b");
  REQUIRE(threshold.size() == size_t(c.degree - 1));  // degrees 2..degree, every scale is positive
  REQUIRE(a.size() >= 3);
  // Degree n at threshold[n - 2]; the other series share its x positions (the same plot's to_x).
  const auto degree_at = [&](double x) {
    for (size_t i = 0; i < threshold.size(); ++i)
      if (std::abs(threshold[i].x() - x) < 0.05) return int(i) + 2;
    return -1;
  };
  // A log axis maps log10(value) linearly to pixels (common practice): the map is fitted by least squares
  // on A's points, drawn by the same plot and rounded to 0.1 px like the threshold.
  Eigen::MatrixXd design(a.size(), 2);
  Eigen::VectorXd pixels(a.size());
  for (size_t i = 0; i < a.size(); ++i) {
    const int n = degree_at(a[i].x());
    REQUIRE(n >= 2);
    design.row(Eigen::Index(i)) << 1.0, std::log10(c.degrees[size_t(n)].rms_a);
    pixels(Eigen::Index(i)) = a[i].y();
  }
  const Eigen::Vector2d map = design.colPivHouseholderQr().solve(pixels);
  const auto pixel_of = [&](double value) { return map(0) + map(1) * std::log10(value); };
  REQUIRE(map(1) < -1);  // pixels grow downwards, more than a pixel per decade
  bool scale_is_not_the_larger_spectrum = false;
  for (int n = 2; n <= c.degree; ++n) {
    const DegreeComparison& d = c.degrees[size_t(n)];
    const double y = threshold[size_t(n - 2)].y();
    CAPTURE(n, d.rms_a, d.rms_b, d.scale, y);
    CHECK(std::abs(y - pixel_of(c.tolerance * d.scale)) < 0.25);
    if (std::abs(y - pixel_of(c.tolerance * std::max(d.rms_a, d.rms_b))) > 2)
      scale_is_not_the_larger_spectrum = true;
  }
  // The check tells this rule from tolerance x max(RMS A, RMS B): at some degree that one is off the line.
  CHECK(scale_is_not_the_larger_spectrum);
  // What the caption says: a degree agrees where A - B is below the dashed line.
  int agreeing = 0, differing = 0;
  for (const auto& point : difference) {
    const int n = degree_at(point.x());
    REQUIRE(n >= 2);
    const double line = threshold[size_t(n - 2)].y();
    CAPTURE(n, point.y(), line);
    if (std::abs(point.y() - line) < 1) continue;  // too close to tell in pixels
    CHECK((point.y() > line) == c.degrees[size_t(n)].agrees);
    ++(c.degrees[size_t(n)].agrees ? agreeing : differing);
  }
  CHECK(agreeing >= 1);
  CHECK(differing >= 1);
  CHECK(part.find(fmt::format("{:.6g} \u00d7 the scale it is measured against", c.tolerance)) !=
        std::string::npos);
}

TEST_CASE("the report refuses sets it cannot describe", "[report]") {
  ReportInput input;
  input.set = power_law_set(4, 1e-3, 3);
  input.set.S.resize(3, 3);
  CHECK_THROWS_AS(make_report(input), ConventionError);
  input.set = power_law_set(4, 1e-3, 3);
  input.set.gm = 0;
  CHECK_THROWS_AS(make_report(input), ConventionError);
  input.set = power_law_set(4, 1e-3, 3);
  input.map_radius_factor = 1.0;
  CHECK_THROWS_AS(make_report(input), ConventionError);
}

TEST_CASE(
    "contour loops of a rasterized disk and annulus enclose their areas (marching squares, common practice)",
    "[report][svg_plot]") {
  const auto area = [](const std::vector<Eigen::Vector2d>& loop) {  // shoelace formula
    double twice = 0;
    for (size_t i = 0; i < loop.size(); ++i) {
      const auto& a = loop[i];
      const auto& b = loop[(i + 1) % loop.size()];
      twice += a.x() * b.y() - a.y() * b.x();
    }
    return std::abs(twice) / 2;
  };
  svg::Grid disk{121, 121, std::vector<float>(121 * 121)};
  svg::Grid ring = disk;
  svg::Grid cone = disk;
  for (int r = 0; r < 121; ++r)
    for (int c = 0; c < 121; ++c) {
      const double d = std::hypot(c - 60.0, r - 60.0);
      disk.values[size_t(r) * 121 + c] = d <= 40 ? 1.0f : 0.0f;
      ring.values[size_t(r) * 121 + c] = d <= 40 && d >= 20 ? 1.0f : 0.0f;
      cone.values[size_t(r) * 121 + c] = float(1 - d / 50);
    }
  const auto disk_loops = svg::contour_loops(disk, 0.5);
  REQUIRE(disk_loops.size() == 1);
  CHECK_THAT(area(disk_loops[0]), WithinRel(pi * 40 * 40, 0.01));
  const auto ring_loops = svg::contour_loops(ring, 0.5);
  REQUIRE(ring_loops.size() == 2);
  CHECK_THAT(std::abs(area(ring_loops[0]) - area(ring_loops[1])), WithinRel(pi * (40 * 40 - 20 * 20), 0.02));
  // A field linear in the distance: the 0.5 level is the circle of radius 25, to the interpolation error.
  const auto cone_loops = svg::contour_loops(cone, 0.5);
  REQUIRE(cone_loops.size() == 1);
  for (const auto& p : cone_loops[0]) CHECK(std::abs(std::hypot(p.x() - 60, p.y() - 60) - 25) < 0.05);
  // A block touching the grid border still closes (the grid is padded below the level).
  svg::Grid full{4, 3, std::vector<float>(12, 1.0f)};
  const auto border = svg::contour_loops(full, 0.5);
  REQUIRE(border.size() == 1);
  // The 4 x 3 rectangle half a step outside the points, each corner cut by a half-step diagonal.
  CHECK_THAT(area(border[0]), WithinRel(4.0 * 3.0 - 4 * 0.125, 1e-12));
  const std::string path = svg::loops_path(border, {0, 0}, {1, 1});
  CHECK(count(path, " L") == 7);  // an octagon: the points along the straight sides are dropped
}

TEST_CASE("axis ticks lie inside the axis on 1-2-5 or decade steps (common practice)", "[report][svg_plot]") {
  const std::vector<double> linear = svg::ticks(svg::Axis{0, 1, false, "", {}});
  REQUIRE(linear.size() == 6);
  for (size_t i = 0; i < linear.size(); ++i) CHECK(std::abs(linear[i] - 0.2 * double(i)) < 1e-12);
  const std::vector<double> decades = svg::ticks(svg::Axis{1e-12, 1e-2, true, "", {}});
  CHECK(decades.size() <= 8);
  for (double t : decades) {
    CHECK(t >= 1e-12);
    CHECK(t <= 1e-2);
    CHECK(std::abs(std::log10(t) - std::round(std::log10(t))) < 1e-12);
  }
  const svg::Axis fitted = svg::axis_for({3e-7, 0, -1, 4e-3}, true, "v");
  CHECK(fitted.min == Approx(1e-7).epsilon(1e-12));
  CHECK(fitted.max == Approx(1e-2).epsilon(1e-12));
  const svg::Axis span = svg::axis_for({-3.2e-4, -2.71e-4}, false, "g");
  CHECK(span.min <= -3.2e-4);
  CHECK(span.max >= -2.71e-4);
  CHECK(svg::tick_label(1e-6) == "1e-6");
  CHECK(svg::tick_label(-2.5e-4) == "-2.5e-4");
  CHECK(svg::tick_label(0.25) == "0.25");
}

TEST_CASE("the colour map gets lighter from 0 to 1 (ITU-R BT.709 luma weights)", "[report][svg_plot]") {
  const auto luma = [](const std::string& hex) {
    const auto channel = [&](int k) { return std::stoi(hex.substr(size_t(1 + 2 * k), 2), nullptr, 16); };
    return 0.2126 * channel(0) + 0.7152 * channel(1) + 0.0722 * channel(2);
  };
  double previous = -1;
  for (int i = 0; i <= 64; ++i) {
    const std::string color = svg::sequential_color(i / 64.0);
    REQUIRE(color.size() == 7);
    CHECK(luma(color) > previous);
    previous = luma(color);
  }
  CHECK(svg::sequential_color(-3) == svg::sequential_color(0));
  CHECK(svg::sequential_color(7) == svg::sequential_color(1));
}

TEST_CASE("escaping keeps UTF-8, replaces markup characters and shows invalid bytes (RFC 3629)",
          "[report][svg_plot]") {
  CHECK(svg::escape("a<b>&\"'") == "a&lt;b&gt;&amp;&quot;&#39;");
  CHECK(svg::escape("\xce\xbb \xe2\x88\x92") == "\xce\xbb \xe2\x88\x92");
  CHECK(svg::escape("\xc0\xaf") == "\\xc0\\xaf");           // overlong
  CHECK(svg::escape("\xed\xa0\x80") == "\\xed\\xa0\\x80");  // surrogate
  CHECK(svg::escape("\xef\xbf\xbe") == "\\xef\\xbf\\xbe");  // U+FFFE is not an XML character
  CHECK(svg::escape("tab\tline\n\x1b") == "tab\tline\n\\x1b");
}

TEST_CASE("mesh_unit_for_set reads a region's mesh in the unit the set records for it", "[report]") {
  // A set computed from two meshes: region 1 in km, region 2 in m (the checksum identifies the file; SHA-256
  // does not depend on how its numbers are read).
  CoefficientSet set = make_empty_set(2);
  set.length_unit = LengthUnit::kilometer;
  Region outer, core;
  outer.mesh = "outer.obj";
  outer.checksum = std::string(64, 'a');
  outer.unit = LengthUnit::kilometer;
  core.mesh = "core.obj";
  core.checksum = std::string(64, 'b');
  core.unit = LengthUnit::meter;
  set.regions = {outer, core};
  const auto km = LengthUnit::kilometer, m = LengthUnit::meter;

  CHECK(mesh_unit_for_set(set, outer.checksum, std::nullopt, "outer.obj").unit == km);
  CHECK(mesh_unit_for_set(set, core.checksum, std::nullopt, "core.obj").unit == m);
  CHECK(mesh_unit_for_set(set, outer.checksum, km, "outer.obj").unit == km);
  CHECK(mesh_unit_for_set(set, outer.checksum, std::nullopt, "outer.obj").reason.find("region 1") !=
        std::string::npos);
  // Asking for metres for a file the set computed in km would shrink it by 1000.
  REQUIRE_THROWS_AS(mesh_unit_for_set(set, outer.checksum, m, "outer.obj"), ConventionError);
  REQUIRE_THROWS_WITH(mesh_unit_for_set(set, core.checksum, km, "core.obj"),
                      Catch::Contains("core.obj is region 2 of the set"));
  // A file the set does not know: the requested unit, else the unit of the set's source meshes.
  CHECK(mesh_unit_for_set(set, std::string(64, 'c'), m, "other.obj").unit == m);
  CHECK(mesh_unit_for_set(set, std::string(64, 'c'), std::nullopt, "other.obj").unit == km);
  // A set with no regions (imported from a table): metres unless asked.
  set.regions.clear();
  CHECK(mesh_unit_for_set(set, outer.checksum, std::nullopt, "outer.obj").unit == m);
  CHECK(mesh_unit_for_set(set, outer.checksum, km, "outer.obj").unit == km);
}

TEST_CASE("an imported table's unknown origin and axes are shown as unknown, not as the mesh origin",
          "[report]") {
  // Issue 10, defect 4: a plain table that declares neither says nothing of where its origin and axes are.
  CoefficientSet set = make_empty_set(2);
  set.gm = 5e2;
  set.reference_radius = 2000;
  set.C(0, 0) = 1;
  set.C(2, 0) = -0.05;
  set.origin = OriginKind::center_of_mass;
  set.origin_known = false;
  set.frame = FrameKind::unknown;
  set.axes_known = false;
  ReportInput input;
  input.set = set;
  const std::string html = make_report(input);
  CHECK(html.find("place in the mesh frame unknown") != std::string::npos);
  CHECK(html.find("directions in the mesh frame unknown") != std::string::npos);
  CHECK(html.find("(0, 0, 0) m in the mesh frame") == std::string::npos);
}

TEST_CASE("the surface section: slope and height maps seen from +z and -z, the slope histogram and the "
          "equilibrium points; the maps are rasterised, so their size does not grow with the facet count",
          "[report]") {
  auto surface_html = [](int subdivisions) {
    const Mesh mesh = make_ellipsoid(subdivisions, 1000, 700, 500);
    const std::vector<DensityRegion> regions{{mesh, 2000.0}};
    ComputeOptions options;
    options.degree = 4;
    ReportInput input;
    input.set = compute_coefficients(regions, options);
    input.mesh = mesh;
    Spin spin;
    spin.period = 7 * 3600;
    input.surface = surface_environment(regions, spin);
    EquilibriumSearch coarse;
    coarse.azimuths = 16;
    coarse.radii = 8;
    input.equilibria = equilibrium_points(regions, input.surface->spin, coarse);
    return std::make_pair(section(make_report(input), "surface"), input.equilibria->points.size());
  };
  const auto [small, points] = surface_html(3);
  CHECK(points == 4);
  CHECK(count(small, "<svg") == 5);
  CHECK(count(small, "<td>E") == points);
  // One bar per 5-degree bin from 0 to 90 degrees.
  CHECK(count(small, "fill=\"#3b6f9e\"") == 18);
  const auto [large, more_points] = surface_html(4);  // four times the facets
  CAPTURE(small.size(), large.size());
  CHECK(large.size() < 2 * small.size());
  CHECK(large.size() < 1000000);
}
