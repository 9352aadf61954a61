#include "polystokes/render/report.h"

#include <fmt/format.h>

#include <Eigen/Geometry>
#include <algorithm>
#include <cmath>
#include <limits>

#include "polystokes/core/constants.h"
#include "polystokes/core/errors.h"
#include "polystokes/mesh/mass_properties.h"
#include "polystokes/render/comparison.h"
#include "polystokes/sets/conventions.h"
#include "polystokes/sets/transforms.h"
#include "render/report_parts.h"
#include "render/silhouette_raster.h"
#include "render/svg_plot.h"

namespace polystokes {

using namespace report_parts;
using svg::escape;

namespace {

std::string vector_text(const Eigen::Vector3d& v) {
  return fmt::format("({}, {}, {})", exact(v.x()), exact(v.y()), exact(v.z()));
}
std::string vector_short(const Eigen::Vector3d& v) {
  return fmt::format("({:.9g}, {:.9g}, {:.9g})", v.x(), v.y(), v.z());
}

std::string row(const std::string& key, const std::string& value, const std::string& extra = {}) {
  return "<tr><th>" + key + "</th><td>" + value + "</td>" + (extra.empty() ? "" : "<td>" + extra + "</td>") +
         "</tr>\n";
}
std::string unknown_if_zero(double v, const std::string& unit) {
  return v == 0 ? std::string("not known (0)") : num(exact(v)) + " " + unit;
}

std::string caution_box() {
  // The caution text opens with its own "CAUTION:" label, shown in bold.
  const std::string text = operational_caution();
  const size_t colon = text.find(':');
  if (colon == std::string::npos || colon > 12) return "<p class=\"caution\">" + escape(text) + "</p>\n";
  return "<p class=\"caution\"><strong>" + escape(text.substr(0, colon + 1)) + "</strong>" +
         escape(text.substr(colon + 1)) + "</p>\n";
}

void check_set(const CoefficientSet& set) {
  const long size = set.degree + 1;
  for (const Eigen::MatrixXd* m : {&set.C, &set.S, &set.sigma_C, &set.sigma_S})
    if (set.degree < 0 || m->rows() != size || m->cols() != size)
      throw ConventionError(
          fmt::format("report: coefficient matrices of '{}' are not {} x {}", set.body, size, size));
  if (!(set.gm > 0) || !std::isfinite(set.gm))
    throw ConventionError(fmt::format("report: GM of '{}' must be positive, got {}", set.body, set.gm));
  if (!(set.reference_radius > 0) || !std::isfinite(set.reference_radius))
    throw ConventionError(fmt::format("report: reference radius of '{}' must be positive, got {}", set.body,
                                      set.reference_radius));
}

std::string provenance_section(const ReportInput& input) {
  const CoefficientSet& set = input.set;
  std::string out =
      "<section id=\"provenance\">\n<h2>Conventions and provenance</h2>\n<table class=\"fields\">\n";
  out += row("body", escape(set.body));
  out += row("source file",
             escape(input.set_source) +
                 (input.set_checksum.empty() ? "" : "<br/>SHA-256 " + num(escape(input.set_checksum))));
  out += row("maximum degree", num(std::to_string(set.degree)));
  out += row("GM", num(exact(set.gm)) + " m<sup>3</sup> s<sup>\u22122</sup>");
  out += row("reference radius", num(exact(set.reference_radius)) + " m");
  out += row("normalization and phase", escape(describe(set.convention)));
  // An imported table that did not declare where its origin or axes are has none to show.
  out += row("expansion origin",
             escape(to_string(set.origin)) +
                 (set.origin_known ? ", at " + num(vector_text(set.origin_in_mesh)) + " m in the mesh frame"
                                   : ", place in the mesh frame unknown"));
  std::string axes;
  for (int i = 0; i < 3; ++i)
    axes += fmt::format("{}{} = {}", i ? "<br/>" : "", "xyz"[i],
                        num(vector_text(set.axes_in_mesh.row(i).transpose())));
  out += row("frame", escape(frame_label(set)) + (set.axes_known ? " (set axes in the mesh frame)<br/>" + axes
                                                                 : ", directions in the mesh frame unknown"));
  if (!set.frame_metadata.empty()) out += row("frame metadata", escape(describe(set.frame_metadata)));
  out += row("centre of mass", num(vector_text(set.center_of_mass)) + " m, mesh frame");
  out += row("mass", unknown_if_zero(set.mass, "kg"));
  out += row("volume", unknown_if_zero(set.volume, "m<sup>3</sup>"));
  out += row("Brillouin radius", unknown_if_zero(set.brillouin_radius, "m") + " about the expansion origin");
  out += row("length unit of the source mesh", escape(to_string(set.length_unit)));
  out += row("created", set.created.empty() ? std::string("not recorded") : escape(set.created));
  out += "</table>\n";
  if (!set.regions.empty()) {
    out +=
        "<h3>Density regions</h3>\n<table "
        "class=\"grid\">\n<tr><th>#</th><th>mesh</th><th>unit</th><th>faces</th>"
        "<th>density (kg m<sup>\u22123</sup>)</th><th>volume (m<sup>3</sup>)</th><th>SHA-256</th></tr>\n";
    for (size_t i = 0; i < set.regions.size(); ++i) {
      const Region& r = set.regions[i];
      out += fmt::format(
          "<tr><td>{}</td><td>{}</td><td>{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td>"
          "<td class=\"num\">{}</td><td class=\"num hash\">{}</td></tr>\n",
          i + 1, escape(r.mesh), escape(to_string(r.unit)), r.faces, exact(r.density), exact(r.volume),
          escape(r.checksum));
    }
    out += "</table>\n";
  }
  out += "<h3>History</h3>\n";
  if (set.history.empty()) {
    out += "<p>No operations recorded.</p>\n";
  } else {
    out += "<ol>\n";
    for (const auto& line : set.history) out += "<li>" + escape(line) + "</li>\n";
    out += "</ol>\n";
  }
  out += "<h3>Notes</h3>\n";
  if (set.notes.empty()) {
    out += "<p>No notes.</p>\n";
  } else {
    out += "<ul>\n";
    for (const auto& line : set.notes) out += "<li>" + escape(line) + "</li>\n";
    out += "</ul>\n";
  }
  return out + "</section>\n";
}

struct MeshFacts {
  MassProperties props;
  double density = 0;
  std::string density_source;
  double brillouin = 0;  // about the set's expansion origin
};

MeshFacts mesh_facts(const ReportInput& input) {
  const CoefficientSet& set = input.set;
  const Mesh& mesh = *input.mesh;
  MeshFacts facts;
  const DensityChoice choice = density_for_set_mesh(set, mesh, input.mesh_density);
  facts.density = choice.density;
  facts.density_source = choice.source;
  facts.props = mass_properties({DensityRegion{mesh, facts.density}});
  facts.brillouin = max_vertex_distance(mesh, set.origin_in_mesh);
  return facts;
}

std::string mass_section(const ReportInput& input, const MeshFacts* facts) {
  const CoefficientSet& set = input.set;
  const bool with_mesh = facts != nullptr;
  std::string out =
      "<section id=\"mass\">\n<h2>Mass properties</h2>\n<table class=\"grid\">\n<tr><th>quantity</th>"
      "<th>from the set</th>";
  if (with_mesh) out += "<th>from the mesh</th>";
  out += "</tr>\n";
  const auto line = [&](const std::string& what, const std::string& from_set, const std::string& from_mesh) {
    out += "<tr><th>" + what + "</th><td>" + from_set + "</td>" +
           (with_mesh ? "<td>" + from_mesh + "</td>" : "") + "</tr>\n";
  };
  const auto mesh_value = [&](double v) { return with_mesh ? num(fmt::format("{:.9g}", v)) : std::string(); };
  line("GM (m<sup>3</sup> s<sup>\u22122</sup>)", num(exact(set.gm)),
       with_mesh ? mesh_value(gravitational_constant * facts->props.mass) : "");
  line("mass (kg)", set.mass > 0 ? num(exact(set.mass)) : "not known",
       with_mesh ? mesh_value(facts->props.mass) : "");
  line("volume (m<sup>3</sup>)", set.volume > 0 ? num(exact(set.volume)) : "not known",
       with_mesh ? mesh_value(facts->props.volume) : "");
  line("bulk density (kg m<sup>\u22123</sup>)",
       set.mass > 0 && set.volume > 0 ? num(fmt::format("{:.9g}", set.mass / set.volume)) : "not known",
       with_mesh ? mesh_value(facts->density) + " (" + escape(facts->density_source) + ")" : "");
  line("centre of mass (m, mesh frame)", num(vector_short(set.center_of_mass)),
       with_mesh ? num(vector_short(facts->props.center_of_mass)) : "");
  if (set.degree >= 1 && set.C(0, 0) != 0) {
    const Eigen::Vector3d from_degree_one =
        set.origin_in_mesh + set.axes_in_mesh.transpose() * center_of_mass_offset(set);
    line("centre of mass implied by the degree-1 terms (m, mesh frame)", num(vector_short(from_degree_one)),
         "");
  }
  line("Brillouin radius about the expansion origin (m)",
       set.brillouin_radius > 0 ? num(exact(set.brillouin_radius)) : "not known",
       with_mesh ? mesh_value(facts->brillouin) : "");
  out += "</table>\n";
  if (!with_mesh) {
    out +=
        "<p>Give the shape mesh (<code>--mesh</code>) to add its mass properties, principal axes and "
        "silhouettes.</p>\n";
    return out + "</section>\n";
  }
  const Mesh& mesh = *input.mesh;
  const MassProperties& p = facts->props;
  out += "<h3>Shape mesh</h3>\n<table class=\"fields\">\n";
  out += row("file", escape(mesh.source) + " (" + escape(to_string(mesh.unit)) +
                         (input.mesh_unit_reason.empty() ? "" : ": " + escape(input.mesh_unit_reason)) + ")");
  out += row("faces, vertices", num(fmt::format("{}, {}", mesh.faces.rows(), mesh.vertices.rows())));
  if (!mesh.checksum.empty()) {
    std::string match = "matches no region of the set: this may not be the shape the set was computed from";
    for (size_t i = 0; i < input.set.regions.size(); ++i)
      if (input.set.regions[i].checksum == mesh.checksum)
        match = fmt::format("matches region {} of the set", i + 1);
    if (input.set.regions.empty()) match = "the set records no region checksums";
    out += row("SHA-256", num(escape(mesh.checksum)) + "<br/>" + escape(match));
  }
  std::string inertia;
  for (int i = 0; i < 3; ++i)
    inertia += fmt::format("{}[{:>15.9g} {:>15.9g} {:>15.9g}]", i ? "<br/>" : "", p.inertia(i, 0),
                           p.inertia(i, 1), p.inertia(i, 2));
  out += row("inertia tensor about the centre of mass (kg m<sup>2</sup>, mesh frame)", num(inertia));
  out += row("principal moments A \u2264 B \u2264 C (kg m<sup>2</sup>)",
             num(fmt::format("{:.9g}, {:.9g}, {:.9g}", p.principal_moments[0], p.principal_moments[1],
                             p.principal_moments[2])));
  // Components below the printed precision are shown as +0 rather than -0.000000000.
  const auto component = [](double v) { return std::abs(v) < 5e-10 ? 0.0 : v; };
  std::string axes;
  for (int k = 0; k < 3; ++k)
    axes += fmt::format("{}{}: ({:+.9f}, {:+.9f}, {:+.9f})", k ? "<br/>" : "", "ABC"[k],
                        component(p.principal_axes(0, k)), component(p.principal_axes(1, k)),
                        component(p.principal_axes(2, k)));
  out += row("principal axes (unit vectors, mesh frame)", num(axes));
  out += "</table>\n";
  for (const auto& notice : mesh.notices)
    out += "<p class=\"notice\">Mesh import: " + escape(notice) + "</p>\n";
  return out + "</section>\n";
}

std::string spectrum_section(const CoefficientSet& set) {
  std::string out = "<section id=\"spectrum\">\n<h2>Degree-variance spectrum</h2>\n";
  if (set.degree < 2)
    return out + "<p>The set has no degree above 1: there is no spectrum to show.</p>\n</section>\n";
  const DegreeSpectrum spectrum = degree_spectrum(set);
  std::optional<PowerLaw> law;
  std::string law_text;
  try {
    law = fit_power_law(spectrum.variance, 2);
  } catch (const ConventionError& e) {
    law_text = "<p>No power law fitted: " + escape(e.what()) + ".</p>\n";
  }
  std::vector<double> degrees, variances, sigmas, fitted;
  std::vector<double> range_values;
  for (int n = 2; n <= set.degree; ++n) {
    range_values.push_back(spectrum.variance[size_t(n)]);
    if (spectrum.has_sigmas) range_values.push_back(spectrum.sigma_variance[size_t(n)]);
  }
  double smallest = std::numeric_limits<double>::infinity();
  for (double v : range_values)
    if (v > 0) smallest = std::min(smallest, v);
  // Degree 1 vanishes to rounding about the centre of mass; only show it when it is on the same scale.
  const bool show_one = spectrum.variance[1] > 0 && spectrum.variance[1] >= smallest * 1e-3;
  for (int n = show_one ? 1 : 2; n <= set.degree; ++n) {
    degrees.push_back(n);
    variances.push_back(spectrum.variance[size_t(n)]);
    sigmas.push_back(spectrum.sigma_variance[size_t(n)]);
    if (law) fitted.push_back(law->k * std::pow(double(n), -law->beta));
  }
  if (show_one) range_values.push_back(spectrum.variance[1]);
  if (law) range_values.insert(range_values.end(), fitted.begin(), fitted.end());

  // Log degree axis with a little room at both ends so the first and last points are not on the frame.
  svg::Axis x{(show_one ? 1 : 2) / 1.12, set.degree * 1.12, true, "degree n", {}};
  const svg::Axis y = svg::axis_for(range_values, true, "degree variance \u03c3\u2099\u00b2 (dimensionless)");
  svg::Plot plot(820, 400, x, y);
  std::vector<svg::LegendEntry> legend;
  svg::Style data{"#1f5fa8", 1.8, false, true, true};
  plot.series(degrees, variances, data);
  legend.push_back({"\u03c3\u2099\u00b2 = \u03a3\u2098 (C\u2099\u2098\u00b2 + S\u2099\u2098\u00b2)", data});
  if (spectrum.has_sigmas) {
    svg::Style style{"#c0392b", 1.6, false, true, true};
    plot.series(degrees, sigmas, style);
    legend.push_back({"error variance \u03a3\u2098 (\u03c3C\u00b2 + \u03c3S\u00b2)", style});
  }
  if (law) {
    svg::Style style{"#555555", 1.4, true, true, false};
    plot.series(degrees, fitted, style);
    legend.push_back({fmt::format("fit {:.4g} n^\u2212{:.4f}", law->k, law->beta), style});
  }
  plot.legend(legend);
  out += "<figure>\n" + plot.svg("spectrum", "Degree-variance spectrum of " + set.body) + "\n<figcaption>";
  out += fmt::format(
      "Degree variances \u03c3\u2099\u00b2 = \u03a3\u2098 (C\u2099\u2098\u00b2 + S\u2099\u2098\u00b2) of the "
      "fully "
      "normalized coefficients (dimensionless) against degree n, both on logarithmic axes, for n = {} to {}",
      show_one ? 1 : 2, set.degree);
  if (!show_one)
    out += fmt::format(" (degree 1 is {} with the origin at the {}, not drawn)", sci(spectrum.variance[1]),
                       set.origin == OriginKind::center_of_mass ? "centre of mass" : "expansion origin");
  out += ".";
  if (spectrum.has_sigmas) out += " Red: the same sum of the squared sigmas.";
  if (law)
    out +=
        " Dashed: the power law fitted by least squares to ln \u03c3\u2099\u00b2 against ln n for n \u2265 "
        "2.";
  out += "</figcaption>\n</figure>\n";
  if (law) {
    out += fmt::format(
        "<p class=\"law\">Fitted law (Kaula-like): \u03c3\u2099\u00b2 \u2248 K n<sup>\u2212\u03b2</sup> with "
        "K = {}, \u03b2 = {} over n = {}\u2013{} ({} degrees), RMS residual {:.3g} decades.</p>\n",
        num(fmt::format("{:.6g}", law->k)), num(fmt::format("{:.6f}", law->beta)), law->first_degree,
        law->last_degree, law->points, law->rms_residual);
  } else {
    out += law_text;
  }
  out +=
      "<details>\n<summary>Degree variances, table</summary>\n<table class=\"grid\">\n<tr><th>n</th>"
      "<th>\u03c3\u2099\u00b2</th><th>RMS per coefficient \u221a(\u03c3\u2099\u00b2/(2n+1))</th>";
  if (spectrum.has_sigmas) out += "<th>error variance</th>";
  if (law) out += "<th>fitted law</th>";
  out += "</tr>\n";
  for (int n = 0; n <= set.degree; ++n) {
    out += fmt::format("<tr><td>{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td>", n,
                       sci(spectrum.variance[size_t(n)]),
                       sci(std::sqrt(spectrum.variance[size_t(n)] / (2 * n + 1))));
    if (spectrum.has_sigmas) out += "<td class=\"num\">" + sci(spectrum.sigma_variance[size_t(n)]) + "</td>";
    if (law)
      out += "<td class=\"num\">" + (n >= 1 ? sci(law->k * std::pow(double(n), -law->beta)) : "") + "</td>";
    out += "</tr>\n";
  }
  out += "</table>\n</details>\n";
  return out + "</section>\n";
}

std::string coefficient_section(const CoefficientSet& set) {
  const CoefficientSet fully = expressed_in(set, Convention{});
  const bool converted = set.convention != Convention{};
  const int top = std::min(4, set.degree);
  std::string out = "<section id=\"coefficients\">\n<h2>Low-degree coefficients</h2>\n";
  out += fmt::format(
      "<p>Fully normalized (4\u03c0), no Condon\u2013Shortley phase, zonal terms as C<sub>n0</sub>, "
      "reference radius {} m, degrees 0 to {}.{}</p>\n",
      num(exact(set.reference_radius)), top,
      converted ? " The set stores " + escape(describe(set.convention)) +
                      "; its own values are in the last two columns."
                : "");
  out +=
      "<table class=\"grid "
      "coefficients\">\n<tr><th>n</th><th>m</th><th>C\u2099\u2098</th><th>S\u2099\u2098</th>"
      "<th>\u03c3(C\u2099\u2098)</th><th>\u03c3(S\u2099\u2098)</th>";
  if (converted) out += "<th>stored C</th><th>stored S</th>";
  out += "</tr>\n";
  for (int n = 0; n <= top; ++n) {
    for (int m = 0; m <= n; ++m) {
      out += fmt::format(
          "<tr><td>{}</td><td>{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td "
          "class=\"num\">{}</td>"
          "<td class=\"num\">{}</td>",
          n, m, sci(fully.C(n, m)), sci(fully.S(n, m)), sci(fully.sigma_C(n, m)), sci(fully.sigma_S(n, m)));
      if (converted)
        out += fmt::format("<td class=\"num\">{}</td><td class=\"num\">{}</td>", sci(set.C(n, m)),
                           sci(set.S(n, m)));
      out += "</tr>\n";
    }
  }
  out += "</table>\n";
  return out + "</section>\n";
}

// One orthographic view: screen right, screen up, and the direction toward the viewer (right x up).
struct View {
  const char* name;
  const char* id;
  int right, up;  // mesh axes shown horizontally and vertically
  Eigen::Vector3d toward;
};

std::string silhouette_svg(const ReportInput& input, const MeshFacts& facts, const View& view) {
  const Mesh& mesh = *input.mesh;
  const CoefficientSet& set = input.set;
  const double radius = facts.brillouin;
  const LengthDisplay unit = display_unit(radius);
  const double frame_px = 260;
  svg::Margins margins{62, 14, 12, 46};
  const double half = 1.08 * radius / unit.metres;
  const double cu = set.origin_in_mesh[view.right] / unit.metres;
  const double cv = set.origin_in_mesh[view.up] / unit.metres;
  const std::string axis_names = "xyz";
  svg::Axis x{cu - half,
              cu + half,
              false,
              std::string(1, axis_names[size_t(view.right)]) + " (" + unit.name + ")",
              {}};
  svg::Axis y{
      cv - half, cv + half, false, std::string(1, axis_names[size_t(view.up)]) + " (" + unit.name + ")", {}};
  svg::Plot plot(margins.left + margins.right + frame_px, margins.top + margins.bottom + frame_px, x, y,
                 margins);

  // Raster of the projection with a depth buffer: samples every 0.8 px.
  const int samples = int(frame_px / 0.8);
  const double spacing = frame_px / samples;
  const auto grid_x = [&](double u) { return (plot.to_x(u / unit.metres) - plot.left()) / spacing - 0.5; };
  const auto grid_y = [&](double v) { return (plot.to_y(v / unit.metres) - plot.top()) / spacing - 0.5; };
  const std::vector<int> front = front_faces(mesh, view.right, view.up, view.toward, samples, grid_x, grid_y);
  svg::Grid coverage{samples, samples, std::vector<float>(front.size())};
  for (size_t s = 0; s < front.size(); ++s) coverage.values[s] = front[s] >= 0 ? 1.0f : 0.0f;
  const std::string outline =
      svg::loops_path(svg::contour_loops(coverage, 0.5),
                      {plot.left() + 0.5 * spacing, plot.top() + 0.5 * spacing}, {spacing, spacing});

  // Shading: Lambert light from the upper left, in front; cells of 3 x 3 samples, runs of equal shade merged.
  Eigen::Vector3d e_right = Eigen::Vector3d::Zero(), e_up = Eigen::Vector3d::Zero();
  e_right[view.right] = 1;
  e_up[view.up] = 1;
  const Eigen::Vector3d light = (0.75 * view.toward + 0.5 * e_up - 0.45 * e_right).normalized();
  const int cell = 3;
  const int cells = (samples + cell - 1) / cell;
  const std::string shading = svg::cell_runs(
      cells, cells, plot.left(), plot.top(), cell * spacing, [&](int ci, int cj) -> std::string {
        const int level = shade_level(mesh, front, samples, cell, ci, cj, light);
        if (level < 0) return {};
        const double t = level / 24.0;
        return fmt::format("#{:02x}{:02x}{:02x}", int(std::lround(60 + 175 * t)),
                           int(std::lround(52 + 160 * t)), int(std::lround(44 + 130 * t)));
      });
  plot.raw(
      fmt::format("<defs><clipPath id=\"{}-body\"><path d=\"{}\" clip-rule=\"evenodd\"/></clipPath></defs>\n",
                  view.id, outline));
  plot.raw(fmt::format("<g clip-path=\"url(#{}-body)\">{}</g>\n", view.id, shading));
  plot.raw(fmt::format(
      "<path d=\"{}\" fill=\"none\" fill-rule=\"evenodd\" stroke=\"#2b2118\" stroke-width=\"1\"/>\n",
      outline));

  // Brillouin sphere and, when different, the reference sphere: circles about the expansion origin.
  const double px_per_unit = (plot.right() - plot.left()) / (2 * half);
  const double ox = plot.to_x(cu), oy = plot.to_y(cv);
  plot.raw(
      fmt::format("<circle cx=\"{:.1f}\" cy=\"{:.1f}\" r=\"{:.1f}\" fill=\"none\" stroke=\"#7b3fa0\" "
                  "stroke-width=\"1.4\"/>\n",
                  ox, oy, radius / unit.metres * px_per_unit));
  if (std::abs(set.reference_radius - radius) > 1e-6 * radius && set.reference_radius < 1.08 * radius)
    plot.raw(
        fmt::format("<circle cx=\"{:.1f}\" cy=\"{:.1f}\" r=\"{:.1f}\" fill=\"none\" stroke=\"#7b3fa0\" "
                    "stroke-width=\"1\" stroke-dasharray=\"5 4\"/>\n",
                    ox, oy, set.reference_radius / unit.metres * px_per_unit));
  // Principal axes through the centre of mass, as long as the body's extent along them.
  const Eigen::Vector3d com = facts.props.center_of_mass;
  const char* colors[3] = {"#d62728", "#2ca02c", "#1f77b4"};
  for (int k = 0; k < 3; ++k) {
    const Eigen::Vector3d axis = facts.props.principal_axes.col(k);
    double extent = 0;
    for (long v = 0; v < mesh.vertices.rows(); ++v)
      extent = std::max(extent, std::abs((mesh.vertices.row(v).transpose() - com).dot(axis)));
    const Eigen::Vector3d tip = com + 1.12 * extent * axis;
    const Eigen::Vector2d center(plot.to_x(com[view.right] / unit.metres),
                                 plot.to_y(com[view.up] / unit.metres));
    const Eigen::Vector2d arm =
        Eigen::Vector2d(plot.to_x(tip[view.right] / unit.metres), plot.to_y(tip[view.up] / unit.metres)) -
        center;
    // Shortened where needed so that both ends and the label stay inside the frame.
    double t = 1;
    const double inset = 14;
    for (double sign : {1.0, -1.0})
      for (int c = 0; c < 2; ++c) {
        const double low = (c == 0 ? plot.left() : plot.top()) + inset;
        const double high = (c == 0 ? plot.right() : plot.bottom()) - inset;
        const double end = center[c] + sign * arm[c];
        if (end > high) t = std::min(t, (high - center[c]) / (end - center[c]));
        if (end < low) t = std::min(t, (low - center[c]) / (end - center[c]));
      }
    t = std::max(t, 0.0);
    const Eigen::Vector2d a = center - t * arm, b = center + t * arm;
    plot.raw(
        fmt::format("<line x1=\"{:.1f}\" y1=\"{:.1f}\" x2=\"{:.1f}\" y2=\"{:.1f}\" stroke=\"{}\" "
                    "stroke-width=\"1.6\"/>\n",
                    a.x(), a.y(), b.x(), b.y(), colors[k]));
    if (t * arm.norm() > 6) {
      const Eigen::Vector2d label = b + 9 * arm.normalized();
      plot.raw(fmt::format(
          "<text x=\"{:.1f}\" y=\"{:.1f}\" fill=\"{}\" font-weight=\"bold\" text-anchor=\"middle\" "
          "dominant-baseline=\"middle\">{}</text>\n",
          label.x(), label.y(), colors[k], "ABC"[k]));
    }
  }
  const double cx = plot.to_x(com[view.right] / unit.metres), cy = plot.to_y(com[view.up] / unit.metres);
  plot.raw(
      fmt::format("<circle cx=\"{:.1f}\" cy=\"{:.1f}\" r=\"3.2\" fill=\"#ffffff\" stroke=\"#000000\" "
                  "stroke-width=\"1.2\"/>\n",
                  cx, cy));
  return plot.svg(view.id, std::string("Silhouette of the body, ") + view.name);
}

std::string silhouette_section(const ReportInput& input, const MeshFacts& facts) {
  const View views[3] = {{"x\u2013y plane, seen from +z", "view-xy", 0, 1, Eigen::Vector3d::UnitZ()},
                         {"x\u2013z plane, seen from \u2212y", "view-xz", 0, 2, -Eigen::Vector3d::UnitY()},
                         {"y\u2013z plane, seen from +x", "view-yz", 1, 2, Eigen::Vector3d::UnitX()}};
  std::string out = "<section id=\"shape\">\n<h2>Shape</h2>\n<div class=\"views\">\n";
  for (const View& view : views)
    out += "<figure class=\"view\">\n" + silhouette_svg(input, facts, view) + "\n<figcaption>" + view.name +
           "</figcaption>\n</figure>\n";
  out += "</div>\n";
  const LengthDisplay unit = display_unit(facts.brillouin);
  out += fmt::format(
      "<p class=\"caption\">Orthographic silhouettes of <em>{}</em> ({} faces) in the mesh frame, lengths in "
      "{}, "
      "shaded by a light from the upper left. Lines: principal axes of inertia through the centre of mass "
      "(white dot), <span style=\"color:#d62728\">A</span> (smallest moment), "
      "<span style=\"color:#2ca02c\">B</span>, <span style=\"color:#1f77b4\">C</span> (largest moment), each "
      "as "
      "long as the body along it. Purple circle: the Brillouin sphere, radius {:.6g} {} about the expansion "
      "origin; the series converges only outside it.{}</p>\n",
      escape(input.mesh->source), input.mesh->faces.rows(), unit.name, facts.brillouin / unit.metres,
      unit.name,
      std::abs(input.set.reference_radius - facts.brillouin) > 1e-6 * facts.brillouin &&
              input.set.reference_radius < 1.08 * facts.brillouin
          ? fmt::format(" Dashed: the reference sphere, radius {:.6g} {}.",
                        input.set.reference_radius / unit.metres, unit.name)
          : std::string());
  return out + "</section>\n";
}

std::string map_section(const ReportInput& input, double brillouin, const std::string& brillouin_source) {
  const CoefficientSet& set = input.set;
  const double radius = input.map_radius_factor * brillouin;
  const FieldMap map = radial_acceleration_map(set, radius, input.map_columns, input.map_rows);
  svg::Axis lon{-180, 180, false, "longitude (degrees, set frame)", {-180, -120, -60, 0, 60, 120, 180}};
  svg::Axis lat{-90, 90, false, "latitude (degrees, set frame)", {-90, -60, -30, 0, 30, 60, 90}};
  svg::Plot plot(900, 420, lon, lat, svg::Margins{62, 126, 12, 48});
  const double span = map.max - map.min;
  for (int r = 0; r < map.rows; ++r) {
    const double top = 90.0 - r * 180.0 / map.rows, bottom = 90.0 - (r + 1) * 180.0 / map.rows;
    for (int c = 0; c < map.columns; ++c) {
      const double west = -180.0 + c * 360.0 / map.columns, east = -180.0 + (c + 1) * 360.0 / map.columns;
      const double v = map.values[size_t(r) * map.columns + c];
      plot.rect(west, bottom, east, top, svg::sequential_color(span > 0 ? (v - map.min) / span : 0.5));
    }
  }
  plot.overlay(svg::color_bar(plot.right() + 16, plot.top(), plot.bottom() - plot.top(), map.min, map.max,
                              "g\u1d63 (m s\u207b\u00b2)", "map-colors"));
  std::string out = "<section id=\"field\">\n<h2>Radial acceleration</h2>\n<figure>\n";
  out += plot.svg("map", "Radial acceleration map of " + set.body) + "\n<figcaption>";
  out += fmt::format(
      "Radial acceleration g\u1d63 = a \u00b7 r\u0302 (m s<sup>\u22122</sup>; negative: toward the body) on "
      "the "
      "sphere of radius {} m = {} \u00d7 the Brillouin radius ({}) about the expansion origin, from the "
      "series to "
      "degree {}. Equirectangular grid of {} \u00d7 {} cells, latitude and longitude in the set's frame "
      "(z axis north, x axis at longitude 0). Range {} to {} m s<sup>\u22122</sup>; the point-mass value "
      "\u2212GM/r\u00b2 is {} m s<sup>\u22122</sup>.",
      num(short_number(radius)), short_number(input.map_radius_factor), escape(brillouin_source), set.degree,
      map.columns, map.rows, num(fmt::format("{:.6e}", map.min)), num(fmt::format("{:.6e}", map.max)),
      num(fmt::format("{:.6e}", -set.gm / (radius * radius))));
  out += "</figcaption>\n</figure>\n";
  return out + "</section>\n";
}

const char* kStyle = R"(
body { margin: 0; background: #eceae4; color: #1d1d1b; font: 15px/1.45 "DejaVu Sans", "Helvetica Neue", Arial, sans-serif; }
main { max-width: 1120px; margin: 0 auto; padding: 18px 34px 30px; background: #ffffff; }
header h1 { margin: 8px 0 2px; font-size: 26px; }
header p { margin: 2px 0; color: #555; }
h2 { margin: 30px 0 8px; padding-bottom: 3px; border-bottom: 2px solid #d8d3c8; font-size: 20px; }
h3 { margin: 18px 0 6px; font-size: 16px; }
.caution { margin: 14px 0; padding: 10px 14px; border-left: 6px solid #c77d00; background: #fff4dc; }
table { border-collapse: collapse; margin: 6px 0; }
th, td { padding: 3px 10px; border-bottom: 1px solid #e2e2e2; text-align: left; vertical-align: top; }
table.fields th { width: 250px; font-weight: 600; color: #333; }
table.grid tr:first-child th { background: #f1efe9; }
td.num, .num { font-family: "DejaVu Sans Mono", Menlo, Consolas, monospace; font-size: 13px; }
table.grid td.num { text-align: right; white-space: nowrap; }
.hash { font-size: 11px; word-break: break-all; white-space: normal; }
figure { margin: 10px 0 16px; }
figcaption, .caption { font-size: 13px; color: #444; max-width: 900px; }
.views { display: flex; flex-wrap: wrap; gap: 6px; }
.views figure { margin: 0; }
.views figcaption { text-align: center; }
.law { font-size: 15px; }
.notice { font-size: 13px; color: #555; }
details summary { cursor: pointer; color: #1f5fa8; }
pre { font-size: 12px; overflow-x: auto; background: #f6f5f1; padding: 8px; }
.verdict { font-weight: 600; padding: 6px 10px; }
.verdict.agree { background: #e6f4e6; border-left: 5px solid #2e8b3e; }
.verdict.disagree { background: #fbe9e7; border-left: 5px solid #c0392b; }
tr.best td { background: #eef6ee; }
footer { margin-top: 28px; font-size: 13px; color: #555; }
.print-caution { display: none; }
@media print {
  body { background: #ffffff; }
  main { max-width: none; padding: 0 0 40px; }
  .print-caution { display: block; position: fixed; bottom: 0; left: 0; right: 0; padding: 4px 8px;
                   font-size: 10px; background: #ffffff; border-top: 1px solid #c77d00; }
  section { page-break-inside: avoid; }
}
)";

}  // namespace

std::string make_report(const ReportInput& input) {
  const CoefficientSet& set = input.set;
  check_set(set);
  if (!(input.map_radius_factor > 1))
    throw ConventionError(
        fmt::format("report: the field map must lie outside the Brillouin sphere (radius factor "
                    "> 1), got {}",
                    input.map_radius_factor));
  std::optional<MeshFacts> facts;
  if (input.mesh) facts = mesh_facts(input);

  double brillouin = set.brillouin_radius;
  std::string brillouin_source = "recorded in the set";
  if (!(brillouin > 0) && facts) {
    brillouin = facts->brillouin;
    brillouin_source = "from the mesh";
  } else if (!(brillouin > 0)) {
    brillouin = set.reference_radius;
    brillouin_source = "not recorded; the reference radius is used instead";
  }
  brillouin_source = fmt::format("{:.6g} m, {}", brillouin, brillouin_source);

  std::string out = "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\"/>\n";
  out += "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\"/>\n";
  out += "<title>" + escape(set.body) + " \u2014 gravity field report</title>\n";
  out += "<style>" + std::string(kStyle) + "</style>\n</head>\n<body>\n";
  out += "<div class=\"print-caution\">" + escape(operational_caution()) + "</div>\n<main>\n";
  out += "<header>\n<h1>Gravity field report: " + escape(set.body) + "</h1>\n";
  out += fmt::format(
      "<p>Constant-density Stokes coefficients to degree {}, GM {} m<sup>3</sup> s<sup>\u22122</sup>, "
      "reference radius {} m.</p>\n",
      set.degree, num(exact(set.gm)), num(exact(set.reference_radius)));
  if (!input.generated.empty()) out += "<p>Report written by " + escape(input.generated) + ".</p>\n";
  out += "</header>\n" + caution_box();
  out += provenance_section(input);
  out += mass_section(input, facts ? &*facts : nullptr);
  out += spectrum_section(set);
  out += coefficient_section(set);
  if (facts) out += silhouette_section(input, *facts);
  if (input.surface && input.mesh) out += surface_section(input);
  out += map_section(input, brillouin, brillouin_source);
  if (input.other) out += comparison_section(input);
  out += "<footer>\n" + caution_box();
  if (!input.generated.empty()) out += "<p>" + escape(input.generated) + "</p>\n";
  out += "</footer>\n</main>\n</body>\n</html>\n";
  return out;
}

}  // namespace polystokes
