// polystokes inspect: mesh checks and mass properties of one shape.
#include <fmt/format.h>

#include <memory>

#include "cli_common.h"
#include "mass_properties.h"
#include "mesh_check.h"
#include "mesh_io.h"

namespace polystokes::cli {
namespace {

struct InspectOptions {
  std::string mesh;
  std::string unit = "m";
  std::string merge_tolerance = "0";
  std::string density = "1000";
};

void run_inspect(const InspectOptions& options, const GlobalOptions& global) {
  const MeshReadOptions read = mesh_read_options({{options.mesh}, {}, options.unit, options.merge_tolerance});
  const LengthUnit unit = read.unit;
  const Quantity density =
      option_quantity(options.density, QuantityKind::density, unit, "--density", Bound::positive);
  Mesh mesh = read_mesh(options.mesh, read);
  for (const auto& notice : mesh.notices) print_notice(global, options.mesh + ": " + notice);
  const MeshCheckReport report = inspect_mesh(mesh);
  // -q: the exit code alone says whether the mesh is a valid solid; errors still go to stderr.
  const bool print = !global.quiet;
  if (print)
    fmt::print("mesh {} ({} vertices, {} faces, unit {}, sha256 {})\n", options.mesh, mesh.vertices.rows(),
               mesh.faces.rows(), to_string(unit), mesh.checksum);
  bool all_passed = true;
  for (const auto& check : report.checks) {
    all_passed = all_passed && check.passed;
    if (!print) continue;
    if (check.passed)
      fmt::print("  check {:<24} ok\n", check.name);
    else if (!check.ran)
      fmt::print("  check {:<24} {}\n", check.name, describe(check));
    else
      fmt::print("  check {:<24} FAILED: {}\n", check.name, describe(check));
  }
  if (!all_passed) {
    // validate_mesh throws the one-line error of the first failed check, or repairs an entirely inside-out
    // mesh (which inspect_mesh reports as not outward oriented) with a notice. A mesh that passed every
    // check needs no second run of the checks.
    const size_t printed = mesh.notices.size();
    validate_mesh(mesh);
    for (size_t i = printed; i < mesh.notices.size(); ++i)
      print_notice(global, options.mesh + ": " + mesh.notices[i]);
  }
  if (!print) return;
  const MassProperties props = mass_properties({DensityRegion{mesh, density.value}});
  const double brillouin_com = max_vertex_distance(mesh, props.center_of_mass);
  const double brillouin_mesh = max_vertex_distance(mesh, Eigen::Vector3d::Zero());
  const double u = meters_per(unit);
  fmt::print("mass properties (density {}{}):\n", describe_quantity(density, QuantityKind::density),
             options.density == "1000" ? ", the default; pass --density" : "");
  std::vector<SummaryRow> rows = mass_property_rows(props, unit);
  rows.push_back({"Brillouin radius", fmt::format("{:.9g} m", brillouin_com),
                  fmt::format("{:.9g} {}, about the COM", brillouin_com / u, to_string(unit))});
  rows.push_back({"", fmt::format("{:.9g} m", brillouin_mesh),
                  fmt::format("{:.9g} {}, about the mesh origin", brillouin_mesh / u, to_string(unit))});
  fmt::print("{}", format_summary(rows));
}

}  // namespace

void setup_inspect(CLI::App& app, const GlobalOptions& global) {
  auto options = std::make_shared<InspectOptions>();
  auto* cmd = app.add_subcommand(
      "inspect",
      "Check a shape mesh and print its mass properties.\n"
      "With -q nothing but errors is printed: the exit code says whether the mesh is a valid solid.\n"
      "Example: polystokes inspect shapes-demo/varnek.obj --unit km --density 1900");
  cmd->add_option("mesh", options->mesh, "Shape mesh (.obj, .off, .ply, .stl)")->required();
  add_mesh_file_options(cmd, options->unit, options->merge_tolerance,
                        "Length unit of the mesh file: m or km");
  add_quantity_option(cmd, "--density", options->density, QuantityKind::density, "Bulk density")
      ->capture_default_str();
  cmd->callback([options, &global]() { run_inspect(*options, global); });
}

}  // namespace polystokes::cli
