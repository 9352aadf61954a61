// polystokes field: potential, acceleration (and gradient) at listed points, from a coefficient set (series)
// or from shape meshes with densities (exact constant-density polyhedron gravity); same output columns.
#include <fmt/format.h>

#include <algorithm>
#include <cctype>
#include <cstdio>
#include <memory>
#include <optional>

#include "cli_common.h"
#include "polystokes/core/errors.h"
#include "polystokes/field/fast_field.h"
#include "polystokes/field/polyhedron_gravity.h"
#include "polystokes/field/series.h"
#include "polystokes/io/coefficient_file.h"
#include "polystokes/io/point_file.h"

namespace polystokes::cli {
namespace {

struct FieldOptions {
  MeshInputOptions input;  ///< meshes: the inputs (a set or meshes); densities for meshes only
  std::string points;
  std::string output;
  int degree = -1;
  bool set_frame = false;
  bool gradient = false;
  bool direct = false;  ///< meshes: the direct sum instead of the fast multipole method
  double accuracy = FastFieldOptions{}.accuracy;
  bool accuracy_given = false;
  int threads = 0;
};

bool is_mesh_path(const std::string& path) {
  const auto dot = path.find_last_of('.');
  if (dot == std::string::npos) return false;
  std::string ext = path.substr(dot + 1);
  std::transform(ext.begin(), ext.end(), ext.begin(), [](unsigned char c) { return char(std::tolower(c)); });
  return ext == "obj" || ext == "off" || ext == "ply" || ext == "stl";
}

std::vector<FieldValue> exact_field(const FieldOptions& options, const Points& points,
                                    const GlobalOptions& global, std::string& model) {
  if (options.degree >= 0) throw ConventionError("--degree applies to coefficient sets, not to meshes");
  if (options.set_frame) throw ConventionError("--set-frame applies to coefficient sets, not to meshes");
  const std::vector<DensityRegion> regions = load_regions(options.input, global);
  std::optional<FastPolyhedronField> fast;
  std::optional<PolyhedronGravity> direct;
  std::vector<FieldValue> values;
  std::string method;
  if (options.direct) {
    direct.emplace(regions);
    values = direct->evaluate(points, options.threads);
  } else {
    FastFieldOptions fast_options;
    fast_options.accuracy = options.accuracy;
    fast_options.threads = options.threads;
    fast.emplace(regions, fast_options);
    FastFieldResult result = fast->evaluate(points);
    values = std::move(result.values);
    const FastFieldReport& report = result.report;
    method = fmt::format(
        "; fast multipole method (order {}), accuracy {:.1e} of GM/R_B = {:.6g} m^2 s^-2 (potential) and of "
        "max(|a|, GM/R_B^2 = {:.6g} m s^-2) (acceleration) by an a-priori bound; checked against the direct "
        "sum on {} points: largest error {:.1e} (potential), {:.1e} (acceleration)",
        report.order, report.accuracy, report.potential_scale, report.acceleration_scale, report.checked,
        report.checked_potential, report.checked_acceleration);
  }
  const PolyhedronGravity& gravity = direct ? *direct : fast->direct();
  long inside = 0;
  for (Eigen::Index i = 0; i < points.rows(); ++i)
    if (gravity.density_at(points.row(i).transpose()) != 0) ++inside;
  if (inside > 0)
    print_notice(global, fmt::format("{} of {} points lie inside the body (the exact model holds there too)",
                                     inside, points.rows()));
  model = fmt::format("exact constant-density polyhedron gravity of {} region(s), {} faces, mesh frame{}",
                      regions.size(), gravity.face_count(), method);
  return values;
}

std::vector<FieldValue> series_field(const FieldOptions& options, const Points& points,
                                     const GlobalOptions& global, std::string& model) {
  const std::vector<std::string>& inputs = options.input.meshes;
  if (inputs.size() != 1) throw ConventionError("give one coefficient set (or meshes with --density)");
  if (options.direct || options.accuracy_given)
    throw ConventionError(std::string(options.direct ? "--direct" : "--accuracy") +
                          " applies to meshes, not to coefficient sets");
  if (!options.input.densities.empty())
    throw ConventionError(inputs[0] + " is a coefficient set: --density applies to meshes only");
  const CoefficientSet set = read_coefficient_file(inputs[0]);
  const SeriesModel series(set, options.degree);
  std::vector<FieldValue> values;
  if (options.set_frame) {
    values = series.evaluate(points, options.threads);
  } else {
    Points local(points.rows(), 3);
    try {
      for (Eigen::Index i = 0; i < points.rows(); ++i)
        local.row(i) = to_set_frame(set, points.row(i).transpose()).transpose();
    } catch (const UnplacedSetError& refusal) {
      throw ConventionError(std::string(refusal.what()) + " (field --set-frame)");
    }
    values = series.evaluate(local, options.threads);
    for (auto& value : values) value = to_mesh_frame(set, value);
  }
  if (set.brillouin_radius > 0) {
    long inside = 0;
    for (Eigen::Index i = 0; i < points.rows(); ++i) {
      const Eigen::Vector3d p = points.row(i).transpose();
      const double r = options.set_frame ? p.norm() : to_set_frame(set, p).norm();
      if (r < set.brillouin_radius) ++inside;
    }
    if (inside > 0 && !global.quiet)
      std::fprintf(
          stderr,
          "polystokes: warning: %ld of %ld points lie inside the Brillouin sphere (r < %.9g m about the "
          "expansion origin), where the series may diverge\n",
          inside, long(points.rows()), set.brillouin_radius);
  } else {
    print_notice(global, "the set records no Brillouin radius; points inside it cannot be flagged");
  }
  model = fmt::format("series of {} to degree {} ({} frame)", inputs[0], series.degree(),
                      options.set_frame ? "set" : "mesh");
  return values;
}

void run_field(const FieldOptions& options, const GlobalOptions& global) {
  for (const auto& input : options.input.meshes) check_input_path(input);
  check_input_path(options.points);
  const PointList list = read_points(options.points, parse_unit_option(options.input.unit));
  const Points& points = list.points;
  print_notice(global, fmt::format("{}: {} points read in {} ({})", options.points, points.rows(),
                                   to_string(list.unit),
                                   list.unit_declared ? "declared by its header" : "bare: --unit"));
  const bool mesh = is_mesh_path(options.input.meshes.front());
  for (const auto& input : options.input.meshes)
    if (is_mesh_path(input) != mesh)
      throw ConventionError("give either meshes (with --density) or one coefficient set, not both");
  std::string model;
  const std::vector<FieldValue> values =
      mesh ? exact_field(options, points, global, model) : series_field(options, points, global, model);
  write_field_table(options.output, points, values, options.gradient);
  if (global.quiet) return;
  std::FILE* out = options.output == "-" ? stderr : stdout;
  fmt::print(out, "polystokes field: {} points, {}\n", points.rows(), model);
  fmt::print(out, "  columns  {}\n", field_table_header(options.gradient));
  fmt::print(out, "  written  {}\n", options.output);
}

}  // namespace

void setup_field(CLI::App& app, const GlobalOptions& global) {
  auto options = std::make_shared<FieldOptions>();
  auto* cmd = app.add_subcommand(
      "field",
      "Potential and acceleration at points, from a coefficient set (series) or from meshes (exact "
      "polyhedron).\n"
      "Points: CSV x,y,z in the mesh frame, in --unit unless a header x_m,y_m,z_m or x_km,y_km,z_km "
      "declares\n"
      "the file's unit ('#' comments). Output columns carry their SI units in the header.\n"
      "Examples: polystokes field body.txt --points pts.csv -o series.csv\n"
      "          polystokes field body.obj --unit km --density 1900 --points pts.csv -o exact.csv");
  cmd->add_option("input", options->input.meshes,
                  "Coefficient set, or mesh(es) .obj/.off/.ply/.stl with --density")
      ->required();
  cmd->add_option("--points", options->points,
                  "CSV file of points x,y,z (bare: --unit; or a header declaring m or km; '-' for stdin)")
      ->required();
  cmd->add_option("-o,--output", options->output,
                  "CSV to write: x_m,y_m,z_m,U_m2_s2,ax_m_s2,ay_m_s2,az_m_s2 ('-' for stdout)")
      ->required();
  cmd->add_option("--density", options->input.densities,
                  "Density per mesh, in mesh order (meshes only; bare: kg/m^3, or with kg/m3, g/cm3)")
      ->check(quantity_syntax(QuantityKind::density))
      ->expected(1, -1);
  add_mesh_file_options(cmd, options->input.unit, options->input.merge_tolerance, options->input.format);
  cmd->add_option("--degree", options->degree,
                  "Truncate the series at this degree (default: the set's degree)")
      ->check(strict_integer())
      ->check(CLI::NonNegativeNumber);
  cmd->add_flag(
      "--set-frame", options->set_frame,
      "Points and output vectors in the set's own frame about its expansion origin (default: mesh frame)");
  cmd->add_flag("--gradient", options->gradient,
                "Add the gravity-gradient columns Txx,Txy,Txz,Tyy,Tyz,Tzz (s^-2)");
  auto* direct = cmd->add_flag("--direct", options->direct,
                "Meshes: sum every face at every point (cost faces x points) instead of the fast multipole "
                "method");
  auto* accuracy = cmd->add_option("--accuracy", options->accuracy,
                  "Meshes: error allowed to the fast multipole method, relative to GM/R_B (potential) and "
                  "max(|a|, GM/R_B^2) (acceleration), R_B the largest vertex distance from the body's centre")
      ->check(strict_number())
      ->check(CLI::Range(1e-14, 1e-2))
      ->capture_default_str()
      ->excludes(direct);
  add_threads_option(cmd, options->threads);
  cmd->callback([options, accuracy, &global]() {
    options->accuracy_given = accuracy->count() > 0;
    run_field(*options, global);
  });
}

}  // namespace polystokes::cli
