// polystokes compute: shape mesh(es) with densities -> exact constant-density Stokes coefficients.
#include <chrono>
#include <cstdio>
#include <fmt/format.h>
#include <memory>
#include <thread>
#include <unistd.h>

#include "cli_common.h"
#include "coefficient_file.h"
#include "conventions.h"
#include "errors.h"
#include "harmonics.h"
#include "memory_budget.h"

namespace polystokes::cli {
namespace {

struct ComputeCommandOptions {
  std::vector<std::string> meshes;
  std::vector<double> densities;
  double gm = 0;
  double mass = 0;
  int degree = 8;
  std::string unit = "m";
  double merge_tolerance = 0;
  double reference_radius = 0;  // in the mesh unit
  std::string origin = "com";
  std::string frame = "mesh";
  std::string normalization = "fully";
  bool condon_shortley = false;
  bool zonal_as_j = false;
  std::string body;
  std::string output;
  std::string json;
  int threads = 0;
};

std::vector<double> resolve_densities(const ComputeCommandOptions& options, const std::vector<Mesh>& meshes) {
  const int given = int(!options.densities.empty()) + int(options.gm > 0) + int(options.mass > 0);
  if (given != 1) throw ConventionError("give exactly one of --density, --gm, --mass");
  if (!options.densities.empty()) {
    if (options.densities.size() != meshes.size())
      throw ConventionError(fmt::format("{} meshes but {} densities: give one --density per mesh, in order",
                                        meshes.size(), options.densities.size()));
    for (size_t i = 0; i < meshes.size(); ++i) {
      if (!std::isfinite(options.densities[i]) || options.densities[i] == 0)
        throw ConventionError(fmt::format("density {} for {} is not a finite non-zero number",
                                          options.densities[i], meshes[i].source));
      if (i == 0 && options.densities[i] < 0)
        throw ConventionError(fmt::format("density of the first (outer) mesh {} must be positive, got {} kg/m^3",
                                          meshes[i].source, options.densities[i]));
    }
    return options.densities;
  }
  if (meshes.size() != 1) throw ConventionError("--gm/--mass need a single mesh; give --density per region");
  const double mass = options.mass > 0 ? options.mass : options.gm / gravitational_constant;
  const double volume = volume_moments(meshes.front()).volume;
  return {mass / volume};
}

double elapsed_since(std::chrono::steady_clock::time_point start) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

/// The summary printed after a run: what was computed from what, the mass properties and the conventions.
std::vector<SummaryRow> summary_rows(const ComputeCommandOptions& options, const CoefficientSet& set,
                                     const MassProperties& props, LengthUnit unit, double seconds) {
  const double u = meters_per(unit);
  std::vector<SummaryRow> rows;
  rows.push_back({"body", set.body, ""});
  for (size_t i = 0; i < set.regions.size(); ++i) {
    const Region& region = set.regions[i];
    rows.push_back({set.regions.size() == 1 ? "mesh" : fmt::format("region {}", i + 1),
                    fmt::format("{}: {} faces, unit {}, {} kg/m^3", region.mesh, region.faces, region.unit,
                                region.density),
                    ""});
  }
  for (auto& row : mass_property_rows(props, unit)) rows.push_back(std::move(row));
  const Eigen::Vector3d& o = set.origin_in_mesh;
  rows.push_back({"expansion origin",
                  options.origin == "com" ? std::string("centre of mass")
                                          : fmt::format("{} ({:.9g}, {:.9g}, {:.9g}) m", set.origin, o.x(), o.y(), o.z()),
                  options.origin == "com" ? "default" : ""});
  rows.push_back({"frame", set.frame + " axes", options.frame == "mesh" ? "default" : ""});
  rows.push_back({"Brillouin radius", fmt::format("{:.9g} m", set.brillouin_radius),
                  fmt::format("{:.9g} {}, about the origin", set.brillouin_radius / u, to_string(unit))});
  rows.push_back({"reference radius", fmt::format("{:.9g} m", set.reference_radius),
                  options.reference_radius > 0 ? fmt::format("{:.9g} {}", set.reference_radius / u, to_string(unit))
                                               : "default: Brillouin radius"});
  rows.push_back({"degree", std::to_string(set.degree), ""});
  const bool default_convention = options.normalization == "fully" && !options.condon_shortley && !options.zonal_as_j;
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
    rows.push_back({"C20, C22, S22", fmt::format("{:.6e}, {:.6e}, {:.6e}", fully.C(2, 0), fully.C(2, 2), fully.S(2, 2)),
                    "fully normalized"});
  }
  rows.push_back({"written", options.output + (options.json.empty() ? "" : ", " + options.json), ""});
  rows.push_back({"time", fmt::format("{:.3f} s", seconds), ""});
  return rows;
}

void run_compute(const ComputeCommandOptions& options, const GlobalOptions& global) {
  const auto start = std::chrono::steady_clock::now();
  const LengthUnit unit = parse_unit_option(options.unit);
  for (const auto& path : options.meshes) check_input_path(path);
  check_output_path(options.output);
  if (!options.json.empty()) check_output_path(options.json);
  // Refused before any mesh is read: the tables, partial sums and written text of this degree.
  const int threads = options.threads > 0 ? options.threads : int(std::max(1u, std::thread::hardware_concurrency()));
  const double run_bytes = coefficient_run_bytes(options.degree, threads, !options.json.empty());
  require_memory(run_bytes, fmt::format("computing and writing a set of degree {} on {} thread(s)", options.degree,
                                        threads));
  print_verbose(global, 1,
                fmt::format("degree {} needs about {:.3g} GB of memory; {:.3g} GB available", options.degree,
                            run_bytes / 1e9, available_memory_bytes() / 1e9));
  std::vector<Mesh> meshes;
  for (const auto& path : options.meshes) meshes.push_back(load_checked_mesh(path, unit, options.merge_tolerance, global));
  print_verbose(global, 1, fmt::format("meshes read and checked in {:.3f} s", elapsed_since(start)));
  const std::vector<double> densities = resolve_densities(options, meshes);
  std::vector<DensityRegion> regions;
  for (size_t i = 0; i < meshes.size(); ++i) regions.push_back({std::move(meshes[i]), densities[i]});

  ComputeOptions compute;
  compute.degree = options.degree;
  compute.reference_radius = options.reference_radius * meters_per(unit);
  compute.origin = options.origin == "mesh" ? OriginChoice::mesh : OriginChoice::center_of_mass;
  compute.frame = options.frame == "principal" ? FrameChoice::principal : FrameChoice::mesh;
  compute.convention.normalization = parse_normalization(options.normalization);
  compute.convention.condon_shortley = options.condon_shortley;
  compute.convention.zonal_as_j = options.zonal_as_j;
  compute.body = options.body.empty() ? regions.front().mesh.source : options.body;
  compute.execution.threads = options.threads;
  if (!global.quiet && ::isatty(STDERR_FILENO)) {
    compute.execution.progress = [](double fraction) {
      std::fprintf(stderr, "\rpolystokes: computing %5.1f%%", 100.0 * fraction);
      if (fraction >= 1.0) std::fprintf(stderr, "\n");
    };
  }
  const MassProperties props = mass_properties(regions);
  const auto compute_start = std::chrono::steady_clock::now();
  const CoefficientSet set = compute_coefficients(regions, compute);
  print_verbose(global, 1, fmt::format("coefficients computed in {:.3f} s", elapsed_since(compute_start)));

  {
    // An interrupt now waits until both files are complete, so it never leaves one half-replaced.
    const OutputSection writing;
    print_verbose(global, 1, "writing " + options.output + (options.json.empty() ? "" : " and " + options.json));
    write_coefficient_file(set, options.output);
    if (!options.json.empty()) write_coefficient_json(set, options.json);
  }
  const double seconds = elapsed_since(start);
  if (global.quiet) return;

  std::FILE* out = options.output == "-" ? stderr : stdout;
  fmt::print(out, "polystokes compute: {}\n", set.body);
  fmt::print(out, "{}", format_summary(summary_rows(options, set, props, unit, seconds)));
  fmt::print(out, "{}\n", operational_caution());
}

}  // namespace

void setup_compute(CLI::App& app, const GlobalOptions& global) {
  auto options = std::make_shared<ComputeCommandOptions>();
  auto* cmd = app.add_subcommand(
      "compute",
      "Exact constant-density Stokes coefficients of one or more shape meshes.\n"
      "Several meshes are superposed, each with its own --density (negative for a void inside the first).\n"
      "Example: polystokes compute shapes-demo/varnek.obj --unit km --density 1900 --degree 16 -o varnek.txt\n"
      "         polystokes compute outer.obj core.obj --density 1800 700 --degree 12 -o layered.txt --json layered.json");
  cmd->add_option("meshes", options->meshes, "Shape mesh(es): .obj, .off, .ply, .stl")->required();
  cmd->add_option("--density", options->densities, "Density per mesh in kg/m^3 (repeat or list, in mesh order)")
      ->expected(1, -1);
  cmd->add_option("--gm", options->gm, "Total GM in m^3 s^-2 instead of a density (single mesh)")->check(CLI::PositiveNumber);
  cmd->add_option("--mass", options->mass, "Total mass in kg instead of a density (single mesh)")->check(CLI::PositiveNumber);
  cmd->add_option("--degree", options->degree, "Maximum degree")->check(CLI::NonNegativeNumber)->capture_default_str();
  cmd->add_option("--unit", options->unit, "Length unit of the mesh files: m or km")
      ->check(CLI::IsMember({"m", "km"}))->capture_default_str();
  cmd->add_option("--merge-tolerance", options->merge_tolerance,
                  "Merge vertices closer than this (mesh unit); exact duplicates are always merged")
      ->check(CLI::NonNegativeNumber);
  cmd->add_option("--ref-radius", options->reference_radius,
                  "Reference radius in the mesh unit (default: Brillouin radius about the origin)")
      ->check(CLI::PositiveNumber);
  cmd->add_option("--origin", options->origin, "Expansion origin: com (centre of mass) or mesh (mesh origin)")
      ->check(CLI::IsMember({"com", "mesh"}))->capture_default_str();
  cmd->add_option("--frame", options->frame, "Axes: mesh or principal (principal axes of inertia)")
      ->check(CLI::IsMember({"mesh", "principal"}))->capture_default_str();
  cmd->add_option("--normalization", options->normalization, "fully (4pi), unnormalized, schmidt or orthonormal")
      ->check(CLI::IsMember({"fully", "unnormalized", "schmidt", "orthonormal"}))->capture_default_str();
  cmd->add_flag("--condon-shortley", options->condon_shortley, "Include the (-1)^m Condon-Shortley phase");
  cmd->add_flag("--zonal-j", options->zonal_as_j, "Write zonal terms as J_n = -C_n0");
  cmd->add_option("--body", options->body, "Body label written into the set (default: first mesh file name)");
  cmd->add_option("-o,--output", options->output, "Coefficient file to write (our text format; - for stdout)")->required();
  cmd->add_option("--json", options->json, "Also write the set as JSON to this file");
  cmd->add_option("--threads", options->threads, "Worker threads (0 = all cores)")->check(CLI::NonNegativeNumber)
      ->capture_default_str();
  cmd->callback([options, &global]() { run_compute(*options, global); });
}

}  // namespace polystokes::cli
