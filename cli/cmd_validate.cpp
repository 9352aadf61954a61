// polystokes validate: how well a coefficient set's truncated series reproduces the exact polyhedron gravity
// of its mesh, by degree and distance, with the recommended degree per shell and Brillouin-sphere warnings.
#include <fmt/format.h>

#include <cstdio>
#include <filesystem>
#include <memory>
#include <optional>

#include "cli_common.h"
#include "polystokes/core/constants.h"
#include "polystokes/core/errors.h"
#include "polystokes/field/series.h"
#include "polystokes/field/validation.h"
#include "polystokes/io/coefficient_file.h"
#include "polystokes/io/facet_file.h"
#include "polystokes/io/output_file.h"
#include "polystokes/io/surface_file.h"
#include "polystokes/mesh/mesh_check.h"
#include "polystokes/render/validation_report.h"

namespace polystokes::cli {
namespace {

struct ValidateOptions {
  std::string mesh;
  std::string set;
  std::string density;  ///< empty: the densities recorded in the set
  std::string unit = "m";
  std::string merge_tolerance = "0";
  std::string format;  ///< --format of the mesh argument; empty = by extension
  std::vector<double> radii = ValidationOptions{}.radius_factors;
  std::vector<std::string> altitudes;  ///< length quantities as given
  double target = ValidationOptions{}.target;
  int samples = ValidationOptions{}.samples;
  std::string json;
  bool direct = false;
  double accuracy = ValidationOptions{}.accuracy;
  int threads = 0;
  std::vector<std::string> surface_maps;  ///< per-facet files of the series' error at the surface
  int surface_degree = -1;                ///< -1: the set's degree
};

// The region meshes: MESH with --density, or MESH as the first of the set's recorded regions with their
// densities (further region meshes are looked up by their recorded names, as given or next to the set file).
std::vector<DensityRegion> load_regions(const ValidateOptions& options, LengthUnit unit,
                                        const CoefficientSet& set, const GlobalOptions& global) {
  const double tolerance = option_quantity(options.merge_tolerance, QuantityKind::length, unit,
                                           "--merge-tolerance", Bound::non_negative)
                               .value;
  // The tolerance in a mesh file's own unit, as the reader takes it.
  // --format names the format of the mesh argument; recorded region meshes go by their extension.
  const auto read_options = [tolerance](LengthUnit mesh_unit, const std::string& format = {}) {
    return MeshReadOptions{mesh_unit, tolerance / meters_per(mesh_unit), format};
  };
  std::vector<DensityRegion> regions;
  if (!options.density.empty()) {
    const Quantity density =
        option_quantity(options.density, QuantityKind::density, unit, "--density", Bound::positive);
    regions.push_back(
        {load_checked_mesh(options.mesh, read_options(unit, options.format), global), density.value});
    return regions;
  }
  if (set.regions.empty())
    throw ConventionError(options.set + " records no density regions: give --density for " + options.mesh);
  regions.push_back(
      {load_checked_mesh(options.mesh, read_options(unit, options.format), global), set.regions[0].density});
  const std::filesystem::path set_dir = std::filesystem::path(options.set).parent_path();
  for (size_t i = 1; i < set.regions.size(); ++i) {
    const Region& region = set.regions[i];
    std::filesystem::path path = region.mesh;
    if (!std::filesystem::exists(path) && std::filesystem::exists(set_dir / path.filename()))
      path = set_dir / path.filename();
    if (!std::filesystem::exists(path))
      throw ConventionError(
          fmt::format("{}: region {} mesh '{}' not found (looked as given and next to the set); "
                      "give --density to validate {} alone",
                      options.set, i + 1, region.mesh, options.mesh));
    regions.push_back({load_checked_mesh(path.string(), read_options(region.unit), global), region.density});
  }
  check_regions(regions);
  print_notice(global, fmt::format("densities taken from {} ({} region(s))", options.set, regions.size()));
  return regions;
}

void run_validate(const ValidateOptions& options, bool unit_given, const GlobalOptions& global) {
  check_input_path(options.mesh);
  check_input_path(options.set);
  for (const std::string& path : options.surface_maps) {
    facet_form_for(path);
    check_output_path(path);
  }
  const CoefficientSet set = read_coefficient_file(options.set);
  // The unit of the mesh file and of bare lengths: the one the set records for this mesh, as report reads it.
  const MeshUnitChoice choice = mesh_unit_for_set(
      set, sha256_file_hex(options.mesh),
      unit_given ? std::optional(parse_unit_option(options.unit)) : std::nullopt, options.mesh);
  const LengthUnit unit = choice.unit;
  if (!unit_given)
    print_notice(global, fmt::format("{}: read in {}, {}", options.mesh, to_string(unit), choice.reason));
  const std::vector<DensityRegion> regions = load_regions(options, unit, set, global);
  ValidationOptions validation;
  validation.radius_factors = options.radii;
  bool bare = false;
  for (const std::string& text : options.altitudes) {
    const Quantity altitude =
        option_quantity(text, QuantityKind::length, unit, "--altitudes", Bound::positive);
    bare = bare || !altitude.has_unit;
    validation.altitudes.push_back(altitude.value);
  }
  if (!validation.altitudes.empty())
    print_notice(global, fmt::format("altitudes {} m{}", fmt::join(validation.altitudes, ", "),
                                     !bare ? std::string(" (as their units say)")
                                           : fmt::format(" (bare values in {}, the unit of the mesh file)",
                                                         to_string(unit))));
  validation.target = options.target;
  validation.samples = options.samples;
  validation.threads = options.threads;
  validation.direct = options.direct;
  validation.accuracy = options.accuracy;
  const ValidationReport report = [&] {
    try {
      return validate_series(regions, set, validation);
    } catch (const UnplacedSetError& refusal) {
      throw ConventionError(std::string(refusal.what()) +
                            (refusal.axes_missing
                                 ? " (for a table, declare --table-axes mesh if it uses the mesh's axes)"
                                 : " (for a table, declare --table-origin com or x,y,z)"));
    }
  }();
  if (!report.exact_method.empty()) print_notice(global, report.exact_method);
  // Per-facet series errors at the surface, computed before any file is written so that all outputs appear
  // together or not at all.
  std::optional<SurfaceSeriesError> map;
  if (!options.surface_maps.empty())
    map = series_error_at_surface(regions, set, options.surface_degree, options.target, options.threads);
  {
    const OutputSection writing;
    OutputGroup group;
    if (!options.json.empty()) group.stage(options.json, format_validation_json(report));
    if (map)
      stage_facet_files(
          group, options.surface_maps, regions.front().mesh,
          series_error_table(*map, options.set,
                             std::string("polystokes ") + POLYSTOKES_VERSION + " at " + utc_timestamp()));
    group.commit();
  }
  if (!global.quiet) {
    std::FILE* out = options.json == "-" ? stderr : stdout;
    fmt::print(out, "{}", format_validation_text(report));
    if (map)
      fmt::print(
          out,
          "surface map: series to degree {} at {} facet centroids: {:.3g} of the surface area above the "
          "target {:g} (largest error {:.3g}); exact field: {}; written to {}\n",
          map->degree, map->centroid.rows(), map->area_above_target, map->target, map->max_error,
          map->exact_method, fmt::join(options.surface_maps, ", "));
    fmt::print(out, "{}\n", operational_caution());
  } else {
    for (const auto& warning : report.warnings) print_warning(warning);
  }
}

}  // namespace

void setup_validate(CLI::App& app, const GlobalOptions& global) {
  auto options = std::make_shared<ValidateOptions>();
  auto* cmd = app.add_subcommand(
      "validate",
      "Compare a coefficient set's series, truncated at every degree, with the exact gravity of its mesh on\n"
      "spheres about the expansion origin (multiples of the Brillouin radius R_B) and at altitudes above "
      "the\n"
      "surface; report the relative acceleration error and the lowest degree meeting --target per shell.\n"
      "Example: polystokes validate body.obj body.txt --altitudes 100,1000 --json validation.json");
  cmd->add_option("mesh", options->mesh, "Shape mesh the set was computed from (.obj, .off, .ply, .stl)")
      ->required();
  cmd->add_option("set", options->set, "Coefficient set (text or JSON)")->required();
  add_quantity_option(cmd, "--density", options->density, QuantityKind::density,
                      "Density (default: the densities recorded in the set, with their region meshes)");
  auto* unit =
      cmd->add_option(
             "--unit", options->unit,
             "Length unit of the mesh file and of bare lengths given here: m or km (default: the unit "
             "recorded in the set)")
          ->check(CLI::IsMember({"m", "km"}));
  add_merge_tolerance_option(cmd, options->merge_tolerance);
  add_mesh_format_option(cmd, options->format);
  cmd->add_option("--radii", options->radii, "Sphere radii as multiples of R_B, comma-separated")
      ->delimiter(',')
      ->check(strict_number())
      ->capture_default_str();
  cmd->add_option("--altitudes", options->altitudes,
                  "Altitudes above the surface, comma-separated (bare: --unit; or each with m, km)")
      ->delimiter(',')
      ->check(quantity_syntax(QuantityKind::length));
  cmd->add_option("--target", options->target, "Relative acceleration error to meet")
      ->check(strict_number())
      ->check(CLI::PositiveNumber)
      ->capture_default_str();
  cmd->add_option("--samples", options->samples, "Sample directions per shell")
      ->check(strict_integer())
      ->check(CLI::PositiveNumber)
      ->capture_default_str();
  cmd->add_option("--json", options->json, "Also write the report as JSON to this file ('-' for stdout)");
  cmd->add_option("--surface-map", options->surface_maps,
                  "Per-facet map of the series' relative error at the surface: .ply, .csv or .json (repeat "
                  "for several)")
      ->expected(1, -1);
  cmd->add_option("--surface-degree", options->surface_degree,
                  "Degree of the series in the surface map (default: the set's degree)")
      ->check(strict_integer())
      ->check(CLI::NonNegativeNumber);
  auto* direct =
      cmd->add_flag("--direct", options->direct,
                    "Exact field by summing every face at every point instead of the fast multipole "
                    "method");
  cmd->add_option(
         "--accuracy", options->accuracy,
         "Error allowed to the fast multipole method, relative to max(|a|, GM/R_B^2), R_B the largest "
         "vertex distance from the body's centre")
      ->check(strict_number())
      ->check(CLI::Range(1e-14, 1e-2))
      ->capture_default_str()
      ->excludes(direct);
  add_threads_option(cmd, options->threads);
  cmd->callback([options, unit, &global]() { run_validate(*options, unit->count() > 0, global); });
}

}  // namespace polystokes::cli
