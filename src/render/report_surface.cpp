// The report's surface section: slope and dynamic-height maps of the body (shaded, coloured orthographic
// views with colour bars), the slope histogram and the equilibrium points.
#include <fmt/format.h>

#include <Eigen/Geometry>
#include <algorithm>
#include <cmath>

#include "render/report_parts.h"
#include "render/silhouette_raster.h"
#include "render/svg_plot.h"

namespace polystokes {

using namespace report_parts;
using svg::escape;

namespace {

/// One coloured map: the per-facet `values` on [low, high] seen along -toward (right, up: mesh axes).
struct MapSpec {
  const char* id;
  const char* view_name;
  int right, up;
  Eigen::Vector3d toward;
};

std::string surface_map(const Mesh& mesh, const SurfaceEnvironment& env, const Eigen::VectorXd& values,
                        double low, double high, const std::string& label, const MapSpec& view,
                        const std::string& id) {
  double reach = 0;
  for (Eigen::Index v = 0; v < mesh.vertices.rows(); ++v)
    reach = std::max(reach, (mesh.vertices.row(v).transpose() - env.spin.center).norm());
  const LengthDisplay unit = display_unit(reach);
  const double frame_px = 240, half = 1.05 * reach / unit.metres;
  const double cu = env.spin.center[view.right] / unit.metres, cv = env.spin.center[view.up] / unit.metres;
  const std::string names = "xyz";
  svg::Axis x{
      cu - half, cu + half, false, std::string(1, names[size_t(view.right)]) + " (" + unit.name + ")", {}};
  svg::Axis y{
      cv - half, cv + half, false, std::string(1, names[size_t(view.up)]) + " (" + unit.name + ")", {}};
  svg::Margins margins{58, 86, 12, 44};
  svg::Plot plot(margins.left + margins.right + frame_px, margins.top + margins.bottom + frame_px, x, y,
                 margins);
  // The raster has a fixed number of samples whatever the mesh size, so a page stays a few hundred kB even
  // for a million facets: each 3 x 3 block of samples becomes one cell, coloured by the mean value of the
  // faces seen there and darkened by Lambert shading.
  const int samples = int(frame_px / 0.8), cell = 3, cells = (samples + cell - 1) / cell;
  const double spacing = frame_px / samples;
  const auto grid_x = [&](double u) { return (plot.to_x(u / unit.metres) - plot.left()) / spacing - 0.5; };
  const auto grid_y = [&](double v) { return (plot.to_y(v / unit.metres) - plot.top()) / spacing - 0.5; };
  const std::vector<int> front = front_faces(mesh, view.right, view.up, view.toward, samples, grid_x, grid_y);
  Eigen::Vector3d e_right = Eigen::Vector3d::Zero(), e_up = Eigen::Vector3d::Zero();
  e_right[view.right] = 1;
  e_up[view.up] = 1;
  const Eigen::Vector3d light = (0.75 * view.toward + 0.5 * e_up - 0.45 * e_right).normalized();
  const double span = high > low ? high - low : 1.0;
  plot.raw(svg::cell_runs(cells, cells, plot.left(), plot.top(), cell * spacing, [&](int ci, int cj) {
    double sum = 0;
    int count = 0;
    for (int j = cj * cell; j < std::min(samples, (cj + 1) * cell); ++j)
      for (int i = ci * cell; i < std::min(samples, (ci + 1) * cell); ++i)
        if (const int f = front[size_t(j * samples + i)]; f >= 0) {
          sum += values[f];
          ++count;
        }
    if (count == 0) return std::string();
    // 24 colour levels and 8 shade levels keep runs long.
    const double t = std::round(24 * std::clamp((sum / count - low) / span, 0.0, 1.0)) / 24;
    const double shade =
        0.45 + 0.55 * std::round(8 * shade_level(mesh, front, samples, cell, ci, cj, light) / 24.0) / 8;
    const std::string base = svg::sequential_color(t);
    const int r = std::stoi(base.substr(1, 2), nullptr, 16), g = std::stoi(base.substr(3, 2), nullptr, 16),
              b = std::stoi(base.substr(5, 2), nullptr, 16);
    return fmt::format("#{:02x}{:02x}{:02x}", int(std::lround(r * shade)), int(std::lround(g * shade)),
                       int(std::lround(b * shade)));
  }));
  plot.overlay(
      svg::color_bar(plot.right() + 14, plot.top() + 10, frame_px - 20, low, high, label, id + "-bar"));
  return plot.svg(id, label + ", " + view.view_name);
}

std::string histogram_svg(const AreaStatistics& slope) {
  svg::Axis x{0, 90, false, "slope (deg)", {}};
  double top = 0;
  for (double share : slope.area_fraction) top = std::max(top, 100 * share);
  svg::Axis y{0, std::max(1.0, 1.1 * top), false, "share of the surface area (%)", {}};
  svg::Plot plot(480, 260, x, y);
  for (size_t k = 0; k < slope.area_fraction.size(); ++k)
    plot.rect(slope.edges[k] + 0.4, 0, slope.edges[k + 1] - 0.4, 100 * slope.area_fraction[k], "#3b6f9e");
  return plot.svg("surface-slope-histogram", "Slope histogram, share of area per 5 degrees");
}

}  // namespace

std::string report_parts::surface_section(const ReportInput& input) {
  const SurfaceEnvironment& env = *input.surface;
  const Mesh& mesh = *input.mesh;
  const MapSpec views[2] = {{"top", "seen from +z", 0, 1, Eigen::Vector3d::UnitZ()},
                            {"bottom", "seen from \u2212z", 0, 1, -Eigen::Vector3d::UnitZ()}};
  std::string out = "<section id=\"surface\">\n<h2>Surface environment</h2>\n";
  const Eigen::Vector3d& a = env.spin.axis;
  out += fmt::format(
      "<p>Uniform rotation with period {} s about the axis ({:.6g}, {:.6g}, {:.6g}) (mesh frame, "
      "right-handed) "
      "through the centre of mass. Slope: angle between gravity plus centrifugal acceleration and the inward "
      "normal. Dynamic height: (W \u2212 W<sub>ref</sub>) / g<sub>ref</sub> with W = \u2212U \u2212 "
      "\u03c9<sup>2</sup>d<sup>2</sup>/2, W<sub>ref</sub> = {} J kg<sup>\u22121</sup> and g<sub>ref</sub> = "
      "{} "
      "m s<sup>\u22122</sup> the area-weighted surface means. Values are facet means over each map "
      "cell.</p>\n",
      num(exact(env.spin.period)), a.x(), a.y(), a.z(), num(short_number(env.reference_potential)),
      num(short_number(env.reference_gravity)));
  out += "<div class=\"views\">\n";
  for (const MapSpec& view : views)
    out += "<figure class=\"view\">\n" +
           surface_map(mesh, env, env.facets.slope, 0, std::max(1.0, env.slope.maximum), "slope (deg)", view,
                       std::string("surface-slope-") + view.id) +
           "\n<figcaption>Slope, " + view.view_name + "</figcaption>\n</figure>\n";
  for (const MapSpec& view : views)
    out += "<figure class=\"view\">\n" +
           surface_map(mesh, env, env.facets.height, env.height.minimum, env.height.maximum,
                       "dynamic height (m)", view, std::string("surface-height-") + view.id) +
           "\n<figcaption>Dynamic height, " + view.view_name + "</figcaption>\n</figure>\n";
  out += "<figure class=\"view\">\n" + histogram_svg(env.slope) +
         "\n<figcaption>Slope histogram</figcaption>\n</figure>\n</div>\n";
  out +=
      "<table class=\"grid\">\n<tr><th>quantity</th><th>area-weighted "
      "mean</th><th>minimum</th><th>maximum</th>"
      "</tr>\n";
  const auto stats_row = [&](const char* name, const AreaStatistics& s) {
    out += fmt::format("<tr><td>{}</td><td>{}</td><td>{}</td><td>{}</td></tr>\n", name,
                       num(short_number(s.mean)), num(short_number(s.minimum)), num(short_number(s.maximum)));
  };
  stats_row("slope (deg)", env.slope);
  stats_row("dynamic height (m)", env.height);
  stats_row("launch speed (m s<sup>\u22121</sup>)", env.launch_speed);
  out += "</table>\n";
  if (input.equilibria) {
    out +=
        "<h3>Equilibrium points</h3>\n<table class=\"grid\">\n<tr><th>point</th><th>x, y, z (m)</th>"
        "<th>azimuth (deg)</th><th>Jacobi constant (J kg<sup>\u22121</sup>)</th><th>linear "
        "stability</th></tr>\n";
    for (size_t k = 0; k < input.equilibria->points.size(); ++k) {
      const EquilibriumPoint& p = input.equilibria->points[k];
      out += fmt::format(
          "<tr><td>E{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td></tr>\n", k + 1,
          num(fmt::format("{:.6g}, {:.6g}, {:.6g}", p.position.x(), p.position.y(), p.position.z())),
          num(fmt::format("{:.2f}", p.azimuth)), num(fmt::format("{:.9g}", p.jacobi)),
          escape(p.stability.describe()));
    }
    out += "</table>\n";
    if (input.equilibria->points.empty()) out += "<p>No equilibrium point was found outside the body.</p>\n";
  }
  return out + "</section>\n";
}

}  // namespace polystokes
