// polystokes compute: shape mesh(es) with densities -> exact constant-density Stokes coefficients.
#include <fmt/format.h>

#include <chrono>
#include <cstdio>
#include <memory>

#include "cli_common.h"
#include "polystokes/core/constants.h"
#include "polystokes/core/errors.h"
#include "polystokes/harmonics/compute.h"
#include "polystokes/io/coefficient_file.h"
#include "polystokes/mesh/mesh_check.h"
#include "polystokes/mesh/plausibility.h"
#include "polystokes/sets/conventions.h"

namespace polystokes::cli {
namespace {

struct ComputeCommandOptions {
  MeshInputOptions input;
  std::string gm;    ///< GM quantity as given; empty = not given
  std::string mass;  ///< mass quantity as given; empty = not given
  ExpansionOptions expansion;
  SetOutputOptions files;
  int threads = 0;
};

/// The density of every region, from --density or (one mesh) from --gm or --mass, with the inputs as
/// interpreted appended to `echo` for the summary and the set's history.
std::vector<double> resolve_densities(const ComputeCommandOptions& options, const std::vector<Mesh>& meshes,
                                      std::vector<SummaryRow>& echo) {
  const MeshInputOptions& input = options.input;
  const int given = int(!input.densities.empty()) + int(!options.gm.empty()) + int(!options.mass.empty());
  if (given != 1) throw ConventionError("give exactly one of --density, --gm, --mass");
  if (!input.densities.empty()) {
    std::vector<double> densities;
    const std::vector<Quantity> quantities = mesh_densities(input);
    for (size_t i = 0; i < quantities.size(); ++i) {
      echo.push_back({fmt::format("density {}", i + 1),
                      describe_quantity(quantities[i], QuantityKind::density), meshes[i].source});
      densities.push_back(quantities[i].value);
    }
    return densities;
  }
  if (meshes.size() != 1) throw ConventionError("--gm/--mass need a single mesh; give --density per region");
  double mass = 0;
  if (!options.gm.empty()) {
    const Quantity gm =
        option_quantity(options.gm, QuantityKind::gm, LengthUnit::meter, "--gm", Bound::positive);
    echo.push_back({"GM", describe_quantity(gm, QuantityKind::gm), ""});
    mass = gm.value / gravitational_constant;
  } else {
    const Quantity given_mass =
        option_quantity(options.mass, QuantityKind::mass, LengthUnit::meter, "--mass", Bound::positive);
    echo.push_back({"mass", describe_quantity(given_mass, QuantityKind::mass), ""});
    mass = given_mass.value;
  }
  const double density = mass / volume_moments(meshes.front()).volume;
  echo.push_back({"density 1", fmt::format("{} kg m^-3", density), "implied: mass / volume"});
  return {density};
}

/// "LABEL VALUE; ..." of interpreted inputs, for the set's history.
std::string history_line(const std::vector<SummaryRow>& echo) {
  std::string line = "inputs as interpreted:";
  for (size_t i = 0; i < echo.size(); ++i)
    line += fmt::format("{} {} {}", i == 0 ? "" : ";", echo[i].label, echo[i].value);
  return line;
}

/// The summary printed after a run: what was computed from what, the mass properties and the conventions.
std::vector<SummaryRow> summary_rows(const ComputeCommandOptions& options, const CoefficientSet& set,
                                     const MassProperties& props, LengthUnit unit,
                                     const std::vector<SummaryRow>& echo, double seconds) {
  const ExpansionOptions& expansion = options.expansion;
  const double u = meters_per(unit);
  std::vector<SummaryRow> rows;
  rows.push_back({"body", set.body, ""});
  for (const SummaryRow& row : echo) rows.push_back({"given " + row.label, row.value, row.remark});
  for (size_t i = 0; i < set.regions.size(); ++i) {
    const Region& region = set.regions[i];
    rows.push_back({set.regions.size() == 1 ? "mesh" : fmt::format("region {}", i + 1),
                    fmt::format("{}: {} faces, unit {}, {} kg/m^3", region.mesh, region.faces,
                                to_string(region.unit), region.density),
                    ""});
  }
  for (auto& row : mass_property_rows(props, unit)) rows.push_back(std::move(row));
  const Eigen::Vector3d& o = set.origin_in_mesh;
  rows.push_back(
      {"expansion origin",
       set.origin == OriginKind::center_of_mass
           ? std::string("centre of mass")
           : fmt::format("{} ({:.9g}, {:.9g}, {:.9g}) m", to_string(set.origin), o.x(), o.y(), o.z()),
       set.origin == OriginKind::center_of_mass ? "default" : ""});
  rows.push_back({"frame", frame_label(set) + " axes", set.frame == FrameKind::mesh ? "default" : ""});
  rows.push_back({"Brillouin radius", fmt::format("{:.9g} m", set.brillouin_radius),
                  fmt::format("{:.9g} {}, about the origin", set.brillouin_radius / u, to_string(unit))});
  rows.push_back({"reference radius", fmt::format("{:.9g} m", set.reference_radius),
                  !expansion.reference_radius.empty()
                      ? fmt::format("{:.9g} {}", set.reference_radius / u, to_string(unit))
                      : "default: Brillouin radius"});
  rows.push_back({"degree", std::to_string(set.degree), ""});
  const bool default_convention =
      expansion.normalization == "fully" && !expansion.condon_shortley && !expansion.zonal_as_j;
  rows.push_back({"normalization", describe(set.convention) + (default_convention ? " (default)" : ""), ""});
  if (set.degree >= 2) {
    // Only the degree-2 block is converted: a full copy would double the memory of a large set.
    CoefficientSet low = make_empty_set(2);
    low.convention = set.convention;
    low.gm = set.gm;
    low.reference_radius = set.reference_radius;
    low.C = set.C.topLeftCorner(3, 3);
    low.S = set.S.topLeftCorner(3, 3);
    const CoefficientSet fully = convert_convention(low, Convention{});
    rows.push_back({"C20, C22, S22",
                    fmt::format("{:.6e}, {:.6e}, {:.6e}", fully.C(2, 0), fully.C(2, 2), fully.S(2, 2)),
                    "fully normalized"});
  }
  const SetOutputOptions& files = options.files;
  rows.push_back({"written", files.output + (files.json.empty() ? "" : ", " + files.json), ""});
  rows.push_back({"time", fmt::format("{:.3f} s", seconds), ""});
  return rows;
}

void run_compute(const ComputeCommandOptions& options, const GlobalOptions& global) {
  const auto start = std::chrono::steady_clock::now();
  const MeshInputOptions& input = options.input;
  const SetOutputOptions& files = options.files;
  const int degree = options.expansion.degree;
  const MeshReadOptions read = mesh_read_options(input);
  const LengthUnit unit = read.unit;
  for (const auto& path : input.meshes) check_input_path(path);
  check_set_output_paths(files);
  // Refused before any mesh is read: the tables, partial sums and written text of this degree.
  const bool json = !files.json.empty() || coefficient_form_for(files.output) == CoefficientForm::json;
  const ComputeMemory memory = require_compute_memory(degree, options.threads, json);
  print_verbose(global, 1,
                fmt::format("degree {} needs about {:.3g} GB of memory; {:.3g} GB available", degree,
                            memory.needed_bytes / 1e9, memory.available_bytes / 1e9));
  // Every option is interpreted before the first mesh is read, so a slip costs no reading time.
  std::vector<SummaryRow> echo{{"unit", to_string(unit), "of the mesh files and of bare lengths given here"}};
  if (read.merge_tolerance > 0)
    echo.push_back({"merge tolerance", fmt::format("{} m", read.merge_tolerance * meters_per(unit)), ""});
  ComputeOptions compute = compute_options(options.expansion, unit, input.meshes.front(), echo);
  std::vector<Mesh> meshes;
  for (const auto& path : input.meshes) meshes.push_back(load_checked_mesh(path, read, global));
  print_verbose(global, 1, fmt::format("meshes read and checked in {:.3f} s", elapsed_since(start)));
  const std::vector<double> densities = resolve_densities(options, meshes, echo);
  const std::vector<DensityRegion> regions = make_regions(std::move(meshes), densities);

  compute.execution.threads = options.threads;
  if (progress_wanted(global)) {
    compute.execution.progress = [](double fraction) {
      print_progress(fmt::format("computing {:5.1f}%", 100.0 * fraction), fraction >= 1.0);
    };
  }
  const auto compute_start = std::chrono::steady_clock::now();
  const MassProperties props = mass_properties(regions, compute.execution.threads);
  CoefficientSet set = compute_coefficients(regions, props, compute);
  set.history.push_back(history_line(echo));
  record_warnings(set,
                  computation_warnings(regions, props, degree, set.reference_radius, set.brillouin_radius));
  print_verbose(global, 1, fmt::format("coefficients computed in {:.3f} s", elapsed_since(compute_start)));

  {
    // Opened before the message, so that an interrupt seen after "writing" waits for both files.
    const OutputSection writing;
    print_verbose(global, 1, "writing " + files.output + (files.json.empty() ? "" : " and " + files.json));
    write_set_files(set, files);
  }
  const double seconds = elapsed_since(start);
  if (global.quiet) return;

  std::FILE* out = files.output == "-" ? stderr : stdout;
  fmt::print(out, "polystokes compute: {}\n", set.body);
  fmt::print(out, "{}", format_summary(summary_rows(options, set, props, unit, echo, seconds)));
  fmt::print(out, "{}\n", operational_caution());
}

}  // namespace

void setup_compute(CLI::App& app, const GlobalOptions& global) {
  auto options = std::make_shared<ComputeCommandOptions>();
  auto* cmd = app.add_subcommand(
      "compute",
      "Exact constant-density Stokes coefficients of one or more shape meshes.\n"
      "Several meshes are superposed, each with its own --density (negative for a void inside the first).\n"
      "Example: polystokes compute shapes-demo/varnek.obj --unit km --density 1900 --degree 16 -o "
      "varnek.txt\n"
      "         polystokes compute outer.obj core.obj --density 1800 700 --degree 12 -o layered.txt --json "
      "layered.json");
  // Missing mesh files are refused in run_compute, as bad input rather than a usage error.
  add_mesh_list_options(cmd, options->input);
  add_quantity_option(cmd, "--gm", options->gm, QuantityKind::gm,
                      "Total GM instead of a density (single mesh)");
  add_quantity_option(cmd, "--mass", options->mass, QuantityKind::mass,
                      "Total mass instead of a density (single mesh)");
  add_degree_option(cmd, options->expansion.degree);
  add_mesh_file_options(cmd, options->input.unit, options->input.merge_tolerance, options->input.format);
  add_expansion_options(cmd, options->expansion);
  add_set_output_options(cmd, options->files);
  add_threads_option(cmd, options->threads);
  cmd->callback([options, &global]() { run_compute(*options, global); });
}

}  // namespace polystokes::cli
