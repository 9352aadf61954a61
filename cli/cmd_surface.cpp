// polystokes surface: the environment at the surface of a uniformly rotating body (gravity plus centrifugal
// acceleration, slope, dynamic height, launch speed) at every facet, and the body's equilibrium points.
#include <fmt/format.h>

#include <chrono>
#include <memory>

#include "cli_common.h"
#include "polystokes/core/constants.h"
#include "polystokes/core/errors.h"
#include "polystokes/field/equilibrium_points.h"
#include "polystokes/field/surface_environment.h"
#include "polystokes/io/surface_file.h"
#include "polystokes/mesh/mass_properties.h"

namespace polystokes::cli {
namespace {

struct SurfaceOptions {
  MeshInputOptions input;
  SpinOptions spin;
  std::vector<std::string> outputs;
  bool no_equilibrium = false;
  int threads = 0;
};

std::string statistics_row(const AreaStatistics& stats, const char* unit) {
  return fmt::format("mean {:.6g} {}, min {:.6g}, max {:.6g}", stats.mean, unit, stats.minimum,
                     stats.maximum);
}

void run_surface(const SurfaceOptions& options, const GlobalOptions& global) {
  const auto start = std::chrono::steady_clock::now();
  for (const auto& path : options.input.meshes) check_input_path(path);
  for (const auto& path : options.outputs) {
    facet_form_for(path);
    check_output_path(path);
  }
  const LengthUnit unit = parse_unit_option(options.input.unit);
  const GivenSpin given = spin_from_options(options.spin, unit);
  const std::vector<DensityRegion> regions = load_regions(options.input, global);
  const Mesh& surface = regions.front().mesh;
  const SurfaceEnvironment env = surface_environment(regions, given.spin, options.threads);
  std::unique_ptr<EquilibriumResult> equilibria;
  if (!options.no_equilibrium)
    equilibria =
        std::make_unique<EquilibriumResult>(equilibrium_points(regions, env.spin, {}, options.threads));
  long faces = 0;
  for (const auto& region : regions) faces += long(region.mesh.faces.rows());
  const double gm = gravitational_constant * mass_properties(regions, options.threads).mass;
  SurfaceProvenance provenance;
  provenance.body = surface.source;
  provenance.model = fmt::format("exact constant-density polyhedron gravity of {} region(s), {} faces",
                                 regions.size(), faces);
  provenance.created = std::string("polystokes ") + POLYSTOKES_VERSION + " at " + utc_timestamp();
  {
    const OutputSection writing;
    write_surface_files(options.outputs, surface, env, equilibria.get(), provenance);
  }
  if (global.quiet) return;

  const Eigen::Vector3d& a = env.spin.axis;
  const Eigen::Vector3d& c = env.spin.center;
  std::vector<SummaryRow> rows{
      {"surface", fmt::format("{}: {} facets", surface.source, surface.faces.rows()), "the first mesh"},
      {"gravity", provenance.model, env.gravity_method},
      {"spin period", given.period_echo, ""},
      {"spin axis", fmt::format("({:.9g}, {:.9g}, {:.9g})", a.x(), a.y(), a.z()),
       options.spin.axis.empty() ? "default: mesh z axis, right-handed" : "mesh frame, right-handed"},
      {"axis through", fmt::format("({:.9g}, {:.9g}, {:.9g}) m", c.x(), c.y(), c.z()), "centre of mass"},
      {"GM", fmt::format("{:.9g} m^3 s^-2", gm), ""},
      {"W_ref", fmt::format("{:.9g} J kg^-1", env.reference_potential),
       "area-weighted mean effective potential, W = -U - 1/2 omega^2 d^2"},
      {"g_ref", fmt::format("{:.9g} m s^-2", env.reference_gravity),
       "area-weighted mean |total acceleration|"},
      {"slope", statistics_row(env.slope, "deg"), "vs the inward normal, area-weighted"},
      {"dynamic height", statistics_row(env.height, "m"), "(W - W_ref) / g_ref"},
      {"launch speed", statistics_row(env.launch_speed, "m s^-1"),
       "along the normal to escape energy; re-impact ignored"},
  };
  if (env.overhanging > 0)
    rows.push_back({"overhanging", fmt::format("{} facets", env.overhanging), "slope above 90 deg"});
  std::string histogram;
  for (size_t k = 0; k < env.slope.area_fraction.size(); ++k)
    histogram += fmt::format("{}{:.0f}-{:.0f}: {:.1f}%", k == 0 ? "" : ", ", env.slope.edges[k],
                             env.slope.edges[k + 1], 100.0 * env.slope.area_fraction[k]);
  rows.push_back({"slope histogram", histogram, "share of area, degrees"});
  if (equilibria) {
    rows.push_back({"equilibria", fmt::format("{} found", equilibria->points.size()),
                    fmt::format("search: {} x {} grid, radii {:.6g} to {:.6g} m about the spin axis, Newton",
                                equilibria->search.azimuths, equilibria->search.radii,
                                equilibria->search.inner, equilibria->search.outer)});
    for (size_t k = 0; k < equilibria->points.size(); ++k) {
      const EquilibriumPoint& p = equilibria->points[k];
      rows.push_back({fmt::format("E{}", k + 1),
                      fmt::format("({:.6g}, {:.6g}, {:.6g}) m, azimuth {:.2f} deg, Jacobi {:.9g} J kg^-1",
                                  p.position.x(), p.position.y(), p.position.z(), p.azimuth, p.jacobi),
                      p.stability.describe()});
    }
  }
  for (const auto& path : options.outputs) rows.push_back({"written", path, ""});
  rows.push_back({"time", fmt::format("{:.3f} s", elapsed_since(start)), ""});
  fmt::print("polystokes surface: {}\n{}{}\n", surface.source, format_summary(rows), operational_caution());
}

}  // namespace

void setup_surface(CLI::App& app, const GlobalOptions& global) {
  auto options = std::make_shared<SurfaceOptions>();
  auto* cmd = app.add_subcommand(
      "surface",
      "Surface environment of a uniformly rotating body at every facet (gravity, centrifugal and total\n"
      "acceleration, slope, dynamic height, launch speed) and its equilibrium points, from the exact field "
      "of\n"
      "the meshes. Each -o file's extension picks its form: .ply (binary, per-facet properties), .csv, "
      ".json.\n"
      "Example: polystokes surface shapes-demo/varnek.obj --unit km --density 1900 --spin-period 5.2h "
      "-o varnek-surface.ply -o varnek-surface.csv");
  add_mesh_list_options(cmd, options->input);
  add_mesh_file_options(cmd, options->input.unit, options->input.merge_tolerance, options->input.format);
  add_spin_options(cmd, options->spin, true);
  cmd->add_option("-o,--output", options->outputs, "File to write: .ply, .csv or .json (repeat for several)")
      ->required()
      ->expected(1, -1);
  cmd->add_flag("--no-equilibrium", options->no_equilibrium, "Skip the search for equilibrium points");
  add_threads_option(cmd, options->threads);
  cmd->callback([options, &global]() { run_surface(*options, global); });
}

}  // namespace polystokes::cli
