// polystokes report: one self-contained HTML page describing a coefficient set (and its shape, when given).
#include <fmt/format.h>

#include <memory>

#include "cli_common.h"
#include "polystokes/core/errors.h"
#include "polystokes/field/equilibrium_points.h"
#include "polystokes/io/coefficient_file.h"
#include "polystokes/io/mesh_io.h"
#include "polystokes/io/output_file.h"
#include "polystokes/mesh/mass_properties.h"
#include "polystokes/render/report.h"

namespace polystokes::cli {
namespace {

struct ReportOptions {
  std::string set;
  std::string mesh;
  std::string unit = "m";
  std::string merge_tolerance = "0";
  std::string format;   ///< --format; empty = by extension
  std::string density;  ///< empty: from the set
  double map_radius = 1.2;
  std::string compare;
  double tolerance = CompareOptions{}.tolerance;
  std::string output;
  SpinOptions spin;
};

void run_report(const ReportOptions& options, bool unit_given, const GlobalOptions& global) {
  for (const std::string* path : {&options.set, &options.mesh, &options.compare})
    if (!path->empty()) check_input_path(*path);
  ReportInput input;
  input.set = read_coefficient_file(options.set);
  input.set_source = options.set;
  if (options.set != "-") input.set_checksum = sha256_file_hex(options.set);
  if (!options.mesh.empty()) {
    // The set records the unit of each mesh it was computed from; a bare --unit default must not override it.
    const MeshUnitChoice choice = mesh_unit_for_set(
        input.set, sha256_file_hex(options.mesh),
        unit_given ? std::optional(parse_unit_option(options.unit)) : std::nullopt, options.mesh);
    input.mesh = load_checked_mesh(
        options.mesh,
        mesh_read_options(
            {{options.mesh}, {}, to_string(choice.unit), options.merge_tolerance, options.format}),
        global);
    if (!unit_given)
      print_notice(global,
                   fmt::format("{}: read in {}, {}", options.mesh, to_string(choice.unit), choice.reason));
    input.mesh_unit_reason = choice.reason;
  }
  if (!options.density.empty())
    input.mesh_density = option_quantity(options.density, QuantityKind::density, LengthUnit::meter,
                                         "--density", Bound::positive)
                             .value;
  if (!options.compare.empty()) {
    input.other = read_coefficient_file(options.compare);
    input.other_source = options.compare;
    input.compare_options.tolerance = options.tolerance;
  }
  if (!options.spin.period.empty()) {
    if (!input.mesh)
      throw ConventionError("--spin-period needs --mesh: the surface maps are drawn on the mesh");
    const GivenSpin given = spin_from_options(options.spin, LengthUnit::meter);
    const DensityChoice density = density_for_set_mesh(input.set, *input.mesh, input.mesh_density);
    const std::vector<DensityRegion> regions{{*input.mesh, density.density}};
    print_notice(global, fmt::format("surface maps: spin period {}, density {} kg m^-3 ({})",
                                     given.period_echo, density.density, density.source));
    input.surface = surface_environment(regions, given.spin);
    input.equilibria = equilibrium_points(regions, input.surface->spin);
  } else if (!options.spin.axis.empty()) {
    throw ConventionError("--spin-axis needs --spin-period");
  }
  input.map_radius_factor = options.map_radius;
  input.generated = std::string("polystokes ") + POLYSTOKES_VERSION + " at " + utc_timestamp();
  const std::string html = make_report(input);
  write_file_atomically(options.output, html);
  if (!global.quiet && options.output != "-")
    fmt::print("polystokes report: {} written ({:.1f} kB)\n", options.output, double(html.size()) / 1024.0);
}

}  // namespace

void setup_report(CLI::App& app, const GlobalOptions& global) {
  auto options = std::make_shared<ReportOptions>();
  auto* cmd = app.add_subcommand(
      "report",
      "One self-contained HTML page (inline SVG, no scripts, no network) describing a coefficient set:\n"
      "conventions and provenance, mass properties, degree-variance spectrum with a fitted power law,\n"
      "low-degree coefficients, a radial-acceleration map, with --mesh silhouettes of the body and, with\n"
      "--compare, the per-degree differences from a second set and the diagnosis of the mismatch; with\n"
      "--mesh and --spin-period, maps of slope and dynamic height, the slope histogram and equilibrium "
      "points.\n"
      "Example: polystokes report varnek.txt --mesh shapes-demo/varnek.obj --unit km -o varnek.html");
  cmd->add_option("set", options->set, "Coefficient file (our text or JSON format; - for stdin)")->required();
  cmd->add_option("--mesh", options->mesh,
                  "Shape mesh of the body (.obj, .off, .ply, .stl), same frame as the set");
  add_mesh_file_options(cmd, options->unit, options->merge_tolerance, options->format,
                        "Length unit of the mesh file: m or km (default: the unit the set records for it)");
  add_quantity_option(cmd, "--density", options->density, QuantityKind::density,
                      "Density for the mesh's mass properties (default: from the set)");
  // Open below: the map must lie outside the Brillouin sphere, where the series converges.
  const CLI::Validator above_one_up_to_1e6(
      [](const std::string& text) -> std::string {
        double value = 0;
        if (!CLI::detail::lexical_cast(text, value) || !(value > 1 && value <= 1e6))
          return "'" + text + "' is not a number greater than 1 and at most 1e6";
        return {};
      },
      "FLOAT in (1, 1e6]");
  cmd->add_option("--map-radius", options->map_radius,
                  "Radius of the field-map sphere as a multiple of the Brillouin radius: greater than 1 "
                  "(outside the sphere), at most 1e6")
      ->check(strict_number())
      ->check(above_one_up_to_1e6)
      ->capture_default_str();
  cmd->add_option("--compare", options->compare, "Second coefficient set to compare with (B; this set is A)");
  cmd->add_option("--tolerance", options->tolerance,
                  "Relative RMS difference per degree up to which the two sets agree")
      ->check(strict_number())
      ->check(CLI::PositiveNumber)
      ->capture_default_str();
  add_spin_options(cmd, options->spin, false);
  cmd->add_option("-o,--output", options->output, "HTML file to write (- for stdout)")->required();
  cmd->callback(
      [options, cmd, &global]() { run_report(*options, cmd->get_option("--unit")->count() > 0, global); });
}

}  // namespace polystokes::cli
