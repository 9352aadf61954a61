// polystokes inspect: mesh checks, mass properties and size measures of one shape, as text or JSON.
#include <fmt/format.h>

#include <cmath>
#include <cstdio>
#include <memory>
#include <nlohmann/json.hpp>
#include <optional>

#include "cli_common.h"
#include "polystokes/core/constants.h"
#include "polystokes/core/errors.h"
#include "polystokes/io/mesh_io.h"
#include "polystokes/io/output_file.h"
#include "polystokes/mesh/mass_properties.h"
#include "polystokes/mesh/mesh_check.h"
#include "polystokes/mesh/mesh_measures.h"

namespace polystokes::cli {
namespace {

using Json = nlohmann::ordered_json;

struct InspectOptions {
  std::string mesh;
  std::string unit = "m";
  std::string merge_tolerance = "0";
  std::string format;  ///< --format; empty = by extension
  std::string density = "1000";
  std::string json;  ///< empty = none, "-" = standard output
};

/// What inspect found, for the text and the JSON forms alike.
struct Findings {
  Quantity density;  ///< as interpreted from --density
  Mesh mesh;
  MeshCheckReport report;
  std::optional<MassProperties> props;  ///< only for a valid solid
  MeshMeasures measures;
  double brillouin_com = 0;   ///< m
  double brillouin_mesh = 0;  ///< m
};

Json vector_json(const Eigen::Vector3d& v) { return Json::array({v.x(), v.y(), v.z()}); }

Json matrix_rows_json(const Eigen::Matrix3d& m) {
  Json rows = Json::array();
  for (int i = 0; i < 3; ++i) rows.push_back(Json::array({m(i, 0), m(i, 1), m(i, 2)}));
  return rows;
}

/// Every quantity in SI with its unit in the key; lengths also in the mesh unit where that differs.
std::string findings_json(const Findings& found, const InspectOptions& options) {
  const Mesh& mesh = found.mesh;
  Json out;
  out["mesh"] = options.mesh;
  out["format"] = mesh.format;
  out["unit"] = to_string(mesh.unit);
  out["sha256"] = mesh.checksum;
  out["vertices"] = mesh.vertices.rows();
  out["faces"] = mesh.faces.rows();
  out["valid"] = first_failure(found.report) == nullptr;
  out["notices"] = mesh.notices;
  Json checks = Json::array();
  for (const auto& check : found.report.checks) {
    Json item;
    item["name"] = check.name;
    item["ran"] = check.ran;
    item["passed"] = check.passed;
    item["count"] = check.count;
    item["detail"] = describe(check);
    checks.push_back(item);
  }
  out["checks"] = checks;
  out["flipped"] = found.report.flipped;
  if (!found.props) return out.dump(2) + "\n";
  const MassProperties& p = *found.props;
  const MeshMeasures& m = found.measures;
  Json mass;
  mass["density_kg_m3"] = found.density.value;
  mass["volume_m3"] = p.volume;
  mass["mass_kg"] = p.mass;
  mass["gm_m3_s2"] = gravitational_constant * p.mass;
  mass["gravitational_constant_m3_kg_s2"] = gravitational_constant;
  mass["center_of_mass_m"] = vector_json(p.center_of_mass);
  mass["inertia_about_com_kg_m2"] = matrix_rows_json(p.inertia);
  mass["principal_moments_kg_m2"] = vector_json(p.principal_moments);
  mass["principal_axes_columns"] = matrix_rows_json(p.principal_axes);
  mass["brillouin_radius_about_com_m"] = found.brillouin_com;
  mass["brillouin_radius_about_mesh_origin_m"] = found.brillouin_mesh;
  out["mass_properties"] = mass;
  Json shape;
  shape["surface_area_m2"] = m.surface_area;
  shape["bounding_box_min_m"] = vector_json(m.box_min);
  shape["bounding_box_max_m"] = vector_json(m.box_max);
  shape["equivalent_radius_m"] = m.equivalent_radius;
  shape["components"] = m.components;
  shape["edges"] = m.edges;
  shape["edge_length_min_m"] = m.edge_min;
  shape["edge_length_mean_m"] = m.edge_mean;
  shape["edge_length_max_m"] = m.edge_max;
  shape["resolvable_degree"] = m.resolvable_degree;
  shape["resolvable_degree_rule"] = "floor(pi * equivalent_radius_m / edge_length_mean_m)";
  out["shape"] = shape;
  return out.dump(2) + "\n";
}

/// A length (power 1) or area (power 2) given in metres, written in `unit`.
std::string in_unit(double metres, LengthUnit unit, int power = 1) {
  const double u = std::pow(meters_per(unit), power);
  const std::string suffix = power == 1 ? "" : "^" + std::to_string(power);
  return fmt::format("{:.9g} {}{}", metres / u, to_string(unit), suffix);
}

std::string point_text(const Eigen::Vector3d& p, double scale, const std::string& unit) {
  return fmt::format("({:.9g}, {:.9g}, {:.9g}) {}", p.x() / scale, p.y() / scale, p.z() / scale, unit);
}

std::vector<SummaryRow> shape_rows(const Findings& found, LengthUnit unit) {
  const MeshMeasures& m = found.measures;
  const double u = meters_per(unit);
  const bool metres = unit == LengthUnit::meter;
  std::vector<SummaryRow> rows;
  rows.push_back({"surface area", fmt::format("{:.9g} m^2", m.surface_area),
                  metres ? "" : in_unit(m.surface_area, unit, 2)});
  rows.push_back({"bounding box", "min " + point_text(m.box_min, 1, "m"),
                  metres ? "mesh axes" : point_text(m.box_min, u, to_string(unit))});
  rows.push_back(
      {"", "max " + point_text(m.box_max, 1, "m"), metres ? "" : point_text(m.box_max, u, to_string(unit))});
  rows.push_back({"equivalent radius", fmt::format("{:.9g} m", m.equivalent_radius),
                  (metres ? "" : in_unit(m.equivalent_radius, unit) + ", ") + "(3 V / 4 pi)^(1/3)"});
  rows.push_back({"components", std::to_string(m.components), "connected pieces of the surface"});
  rows.push_back({"edge length",
                  fmt::format("min {:.6g}, mean {:.6g}, max {:.6g} m", m.edge_min, m.edge_mean, m.edge_max),
                  fmt::format("{} distinct edges", m.edges)});
  rows.push_back({"resolvable degree", fmt::format("about {}", m.resolvable_degree),
                  "pi x equivalent radius / mean edge length (common practice)"});
  return rows;
}

void print_findings(std::FILE* out, const Findings& found, const InspectOptions& options) {
  const Mesh& mesh = found.mesh;
  const LengthUnit unit = mesh.unit;
  fmt::print(out, "mesh {} ({}, {} vertices, {} faces, unit {}, sha256 {})\n", options.mesh, mesh.format,
             mesh.vertices.rows(), mesh.faces.rows(), to_string(unit), mesh.checksum);
  for (const auto& check : found.report.checks) {
    if (check.passed && check.name == "outward_oriented" && found.report.flipped)
      fmt::print(out, "  check {:<24} ok after reversing every face (the mesh was inside-out)\n", check.name);
    else if (check.passed)
      fmt::print(out, "  check {:<24} ok\n", check.name);
    else if (!check.ran)
      fmt::print(out, "  check {:<24} {}\n", check.name, describe(check));
    else
      fmt::print(out, "  check {:<24} FAILED: {}\n", check.name, describe(check));
  }
  if (!found.props) return;
  const double u = meters_per(unit);
  fmt::print(out, "mass properties (density {}{}):\n",
             describe_quantity(found.density, QuantityKind::density),
             options.density == "1000" ? ", the default; pass --density" : "");
  std::vector<SummaryRow> rows = mass_property_rows(*found.props, unit);
  rows.push_back({"Brillouin radius", fmt::format("{:.9g} m", found.brillouin_com),
                  fmt::format("{:.9g} {}, about the COM", found.brillouin_com / u, to_string(unit))});
  rows.push_back(
      {"", fmt::format("{:.9g} m", found.brillouin_mesh),
       fmt::format("{:.9g} {}, about the mesh origin", found.brillouin_mesh / u, to_string(unit))});
  fmt::print(out, "{}", format_summary(rows));
  fmt::print(out, "shape:\n{}", format_summary(shape_rows(found, unit)));
}

void run_inspect(const InspectOptions& options, const GlobalOptions& global) {
  if (!options.json.empty()) check_output_path(options.json);
  const MeshReadOptions read =
      mesh_read_options({{options.mesh}, {}, options.unit, options.merge_tolerance, options.format});
  Findings found;
  found.density =
      option_quantity(options.density, QuantityKind::density, read.unit, "--density", Bound::positive);
  found.mesh = read_mesh(options.mesh, read);
  // One rule with every other command: an inside-out mesh is reversed with a notice, not failed.
  found.report = check_mesh(found.mesh);
  for (const auto& notice : found.mesh.notices) print_notice(global, options.mesh + ": " + notice);
  const MeshCheck* failed = first_failure(found.report);
  if (failed == nullptr) {
    found.props = mass_properties({DensityRegion{found.mesh, found.density.value}});
    found.measures = measure_mesh(found.mesh);
    found.brillouin_com = max_vertex_distance(found.mesh, found.props->center_of_mass);
    found.brillouin_mesh = max_vertex_distance(found.mesh, Eigen::Vector3d::Zero());
  }
  if (!options.json.empty()) write_file_atomically(options.json, findings_json(found, options));
  // -q: nothing but errors, so the exit code and a failed check's one-line error answer alone.
  if (!global.quiet) print_findings(options.json == "-" ? stderr : stdout, found, options);
  if (failed != nullptr) throw check_failure(found.mesh, *failed);
}

}  // namespace

void setup_inspect(CLI::App& app, const GlobalOptions& global) {
  auto options = std::make_shared<InspectOptions>();
  auto* cmd = app.add_subcommand(
      "inspect",
      "Check a shape mesh and print its mass properties and shape measures (surface area, bounding box,\n"
      "equivalent radius, components, edge lengths, the degree the mesh resolves).\n"
      "An inside-out mesh is reversed with a notice. A failed check is printed with its first offender and\n"
      "the command exits with code 2; with -q only that error is printed.\n"
      "Example: polystokes inspect shapes-demo/varnek.obj --unit km --density 1900 --json varnek-mesh.json");
  cmd->add_option("mesh", options->mesh, "Shape mesh (.obj, .off, .ply, .stl; other formats with --format)")
      ->required();
  add_mesh_file_options(cmd, options->unit, options->merge_tolerance, options->format,
                        "Length unit of the mesh file: m or km");
  add_quantity_option(cmd, "--density", options->density, QuantityKind::density, "Bulk density")
      ->capture_default_str();
  cmd->add_option("--json", options->json,
                  "Also write the checks and properties as JSON to this file (- for stdout; the text then "
                  "goes to stderr)");
  cmd->callback([options, &global]() { run_inspect(*options, global); });
}

}  // namespace polystokes::cli
