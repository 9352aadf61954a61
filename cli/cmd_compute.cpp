// polystokes compute: shape mesh(es) with densities -> exact constant-density Stokes coefficients.
#include <chrono>
#include <cstdio>
#include <fmt/format.h>
#include <memory>
#include <unistd.h>

#include "cli_common.h"
#include "coefficient_file.h"
#include "conventions.h"
#include "errors.h"
#include "harmonics.h"

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

void run_compute(const ComputeCommandOptions& options, const GlobalOptions& global) {
  const auto start = std::chrono::steady_clock::now();
  const LengthUnit unit = parse_unit_option(options.unit);
  std::vector<Mesh> meshes;
  for (const auto& path : options.meshes) meshes.push_back(load_checked_mesh(path, unit, options.merge_tolerance, global));
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
  const CoefficientSet set = compute_coefficients(regions, compute);

  write_coefficient_file(set, options.output);
  if (!options.json.empty()) write_coefficient_json(set, options.json);
  const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  if (global.quiet) return;

  std::FILE* out = options.output == "-" ? stderr : stdout;
  const double u = meters_per(unit);
  fmt::print(out, "polystokes compute: {}\n", set.body);
  for (const auto& region : set.regions)
    fmt::print(out, "  region             {} ({} faces, unit {}), density {} kg/m^3, volume {:.9g} m^3\n",
               region.mesh, region.faces, region.unit, region.density, region.volume);
  fmt::print(out, "{}", format_mass_properties(props, unit));
  fmt::print(out, "  expansion origin   {} ({:.9g}, {:.9g}, {:.9g}) m{}\n", set.origin, set.origin_in_mesh.x(),
             set.origin_in_mesh.y(), set.origin_in_mesh.z(), options.origin == "com" ? " (default)" : "");
  fmt::print(out, "  frame              {}{}\n", set.frame, options.frame == "mesh" ? " axes (default)" : " axes");
  fmt::print(out, "  Brillouin radius   {:.9g} m ({:.9g} {})\n", set.brillouin_radius, set.brillouin_radius / u,
             to_string(unit));
  fmt::print(out, "  reference radius   {:.9g} m{}\n", set.reference_radius,
             options.reference_radius > 0 ? "" : " (default: Brillouin radius)");
  fmt::print(out, "  degree             {}\n", set.degree);
  fmt::print(out, "  convention         {}{}\n", describe(set.convention),
             options.normalization == "fully" && !options.condon_shortley && !options.zonal_as_j ? " (default)" : "");
  if (set.degree >= 2) {
    const CoefficientSet fully = convert_convention(set, Convention{});
    fmt::print(out, "  C20 {:.6e}  C22 {:.6e}  S22 {:.6e} (fully normalized)\n", fully.C(2, 0), fully.C(2, 2),
               fully.S(2, 2));
  }
  fmt::print(out, "  written            {}{}\n", options.output, options.json.empty() ? "" : " and " + options.json);
  fmt::print(out, "  time               {:.3f} s\n", seconds);
  fmt::print(out, "{}\n", operational_caution());
}

}  // namespace

void setup_compute(CLI::App& app, const GlobalOptions& global) {
  auto options = std::make_shared<ComputeCommandOptions>();
  auto* cmd = app.add_subcommand(
      "compute",
      "Exact constant-density Stokes coefficients of one or more shape meshes.\n"
      "Several meshes are superposed, each with its own --density (negative for a void inside the first).\n"
      "Example: polystokes compute shapes-demo/dumbbell.obj --unit km --density 1900 --degree 16 -o dumbbell.txt");
  cmd->add_option("meshes", options->meshes, "Shape mesh(es): .obj, .off, .ply, .stl")->required()->check(CLI::ExistingFile);
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
