// polystokes convert: one coefficient set (ours, or a plain table of another tool) -> the same field under
// other conventions, reference radius, GM, origin or axes, with every step in the set's history.
#include <fmt/format.h>

#include <cmath>
#include <cstdio>
#include <memory>
#include <sstream>

#include "cli_common.h"
#include "covariance_options.h"
#include "polystokes/core/errors.h"
#include "polystokes/io/coefficient_file.h"
#include "polystokes/io/covariance_file.h"
#include "polystokes/io/table_import.h"
#include "polystokes/mesh/plausibility.h"
#include "polystokes/sets/conventions.h"
#include "polystokes/sets/transforms.h"
#include "table_options.h"

namespace polystokes::cli {
namespace {

struct ConvertOptions {
  std::string input;
  SetOutputOptions files;
  CovarianceFileOptions covariance_files;
  bool no_covariance = false;
  std::string unit = "m";  // of every bare length given on the command line
  // Target conventions; empty = keep. Quantities as given.
  std::string to_normalization, to_condon_shortley, to_zonal;
  std::string to_ref_radius, to_gm;
  std::string shift;  // "dx,dy,dz" or "com"
  bool allow_outside = false;
  std::string rotate_matrix, rotate_euler;
  bool to_principal = false;
  int max_degree = -1;  // -1: keep the set's degree
  std::string body;
  // Plain-table input.
  TableConventionOptions table;
  std::string comment = "#";
  int skip_lines = 0;
  std::string table_origin, table_axes;
  FrameMetadataOptions frame;
};

Eigen::Matrix3d parse_matrix(const std::string& text) {
  std::vector<double> values;
  size_t start = 0;
  for (;;) {
    const size_t comma = text.find(',', start);
    const auto value = parse_strict_number(
        std::string_view(text).substr(start, comma == std::string::npos ? comma : comma - start));
    if (!value) break;
    values.push_back(*value);
    if (comma == std::string::npos) break;
    start = comma + 1;
  }
  if (values.size() != 9 || text.find(',', start) != std::string::npos)
    throw ConventionError("--rotate-matrix: '" + text + "' is not nine comma-separated numbers (row by row)");
  Eigen::Matrix3d q;
  for (int i = 0; i < 9; ++i) q(i / 3, i % 3) = values[size_t(i)];
  return q;
}

/// The input set, or the plain table read with its declarations; the declared quantities as interpreted are
/// appended to `echo`.
CoefficientSet read_input(const ConvertOptions& options, const GlobalOptions& global, const LengthUnit unit,
                          std::vector<std::string>& echo) {
  const bool table = options.table.given() || options.skip_lines > 0 || !options.table_origin.empty() ||
                     !options.table_axes.empty();
  if (!table) return read_coefficient_file(options.input);
  TableImportOptions import;
  static_cast<TableConventions&>(import) =
      table_conventions_of(options.table, unit, parse_table_columns, echo);
  import.comment = options.comment;
  import.skip_lines = options.skip_lines;
  import.body = options.body;
  if (options.table_origin == to_string(OriginKind::center_of_mass)) {
    import.origin = OriginKind::center_of_mass;
  } else if (!options.table_origin.empty()) {
    import.origin = OriginKind::point;
    import.origin_point = option_point(options.table_origin, unit, "--table-origin");
    const Eigen::Vector3d& p = import.origin_point;
    echo.push_back(fmt::format("--table-origin ({}, {}, {}) m", p.x(), p.y(), p.z()));
  }
  import.axes = options.table_axes;
  CoefficientSet set = read_table(options.input, import);
  print_notice(global, fmt::format("{}: read as a plain table of degree {} ({})", options.input, set.degree,
                                   describe(set.convention)));
  for (const std::string& note : set.notes) print_notice(global, note);  // what the table leaves unknown
  return set;
}

void run_convert(const ConvertOptions& options, const GlobalOptions& global) {
  check_input_path(options.input);
  check_set_output_paths(options.files);
  const LengthUnit unit = parse_unit_option(options.unit);
  // Every quantity is interpreted before any step runs; the history records each as read.
  std::vector<std::string> echo{"unit " + to_string(unit) + " (bare lengths)"};
  CoefficientSet set = read_input(options, global, unit, echo);
  // The companion covariance follows every step: C' = T C T^T with T the composition of the steps' maps.
  std::optional<CoefficientCovariance> covariance;
  if (options.no_covariance)
    drop_covariance_link(set);
  else
    covariance = read_companion_covariance(set, options.input);
  const std::string covariance_path =
      covariance ? covariance_output_path(options.covariance_files, options.files) : std::string();
  if (!options.body.empty()) set.body = options.body;
  const CoefficientSet input = set;
  std::vector<CoefficientMap> maps;
  // Each step's parameters are fixed from the set before it, so the map is linear in the coefficients.
  const auto apply = [&](CoefficientMap map) {
    set = map(set);
    maps.push_back(std::move(map));
  };
  const size_t first_new_history = set.history.size();
  const size_t first_new_note = set.notes.size();
  set.history.push_back(fmt::format("polystokes convert of {}", options.input));

  const auto length = [&](const std::string& text, const char* option) {
    const Quantity q = option_quantity(text, QuantityKind::length, unit, option, Bound::positive);
    echo.push_back(fmt::format("{} {}", option, describe_quantity(q, QuantityKind::length)));
    return q.value;
  };
  std::optional<Eigen::Vector3d> shift;
  if (!options.shift.empty() && options.shift != to_string(OriginKind::center_of_mass)) {
    shift = option_point(options.shift, unit, "--shift");
    echo.push_back(fmt::format("--shift ({}, {}, {}) m", shift->x(), shift->y(), shift->z()));
  }
  std::optional<Eigen::Vector3d> euler_degrees;
  if (!options.rotate_euler.empty()) {
    const auto angles =
        parse_quantity_list(options.rotate_euler, QuantityKind::angle, unit, "--rotate-euler", 3);
    euler_degrees = Eigen::Vector3d(angles[0].value, angles[1].value, angles[2].value);
  }
  const std::optional<double> to_radius =
      options.to_ref_radius.empty() ? std::nullopt
                                    : std::optional(length(options.to_ref_radius, "--to-ref-radius"));
  std::optional<double> to_gm;
  if (!options.to_gm.empty()) {
    const Quantity q = option_quantity(options.to_gm, QuantityKind::gm, unit, "--to-gm", Bound::positive);
    echo.push_back("--to-gm " + describe_quantity(q, QuantityKind::gm));
    to_gm = q.value;
  }
  set.history.push_back("inputs as interpreted: " + fmt::format("{}", fmt::join(echo, "; ")));
  const double gm_before = set.gm;
  // First, so later steps work on the degrees kept (a shift or rotation of degree n uses degrees <= n only).
  if (options.max_degree >= 0) {
    set = truncate_degree(set, options.max_degree);  // refuses a degree the set does not have
    // A covariance below the cut keeps its degrees.
    maps.push_back([cut = options.max_degree](const CoefficientSet& s) {
      return truncate_degree(s, std::min(cut, s.degree));
    });
  }

  if (!options.shift.empty()) {
    try {
      const Eigen::Vector3d d = shift ? *shift : center_of_mass_offset(set);
      apply([d, outside = ShiftOptions{options.allow_outside}](const CoefficientSet& s) {
        return shift_origin(s, d, outside);
      });
    } catch (const ShiftOutsideError& refusal) {
      throw ConventionError(std::string(refusal.what()) + " (use --allow-outside to proceed anyway)");
    }
  }
  const auto rotate = [&](const Eigen::Matrix3d& q) {
    apply([q](const CoefficientSet& s) { return rotate_set(s, q); });
  };
  if (!options.rotate_matrix.empty()) rotate(parse_matrix(options.rotate_matrix));
  if (euler_degrees) {
    const Eigen::Vector3d angles = *euler_degrees * (M_PI / 180.0);
    rotate(euler_zyz_matrix(angles.x(), angles.y(), angles.z()));
    set.history.back() += fmt::format(" (z-y-z Euler angles {}, {}, {} deg)", euler_degrees->x(),
                                      euler_degrees->y(), euler_degrees->z());
  }
  if (options.to_principal) {
    // The axes of the nominal set, held fixed for the covariance (their own uncertainty is not propagated).
    const Eigen::Matrix3d q = principal_axes_rotation(set);
    set = rotate_to_principal_axes(set);
    maps.push_back([q](const CoefficientSet& s) { return rotate_set(s, q, FrameKind::principal); });
  }
  if (to_radius) apply([r = *to_radius](const CoefficientSet& s) { return rescale_reference_radius(s, r); });
  if (to_gm) apply([gm = *to_gm](const CoefficientSet& s) { return rescale_gm(s, gm); });

  Convention target = set.convention;
  if (!options.to_normalization.empty()) target.normalization = parse_normalization(options.to_normalization);
  if (!options.to_condon_shortley.empty()) target.condon_shortley = options.to_condon_shortley == "on";
  if (!options.to_zonal.empty()) target.zonal_as_j = options.to_zonal == "j";
  if (target != set.convention)
    apply([target](const CoefficientSet& s) { return convert_convention(s, target); });
  if (covariance)
    covariance = transform_covariance(*covariance, input, [&maps](const CoefficientSet& s) {
      CoefficientSet out = s;
      for (const CoefficientMap& map : maps) out = map(out);
      return out;
    });
  // Last, so that metadata given here describes the axes the set ends in (a rotation drops the old pole).
  declare_frame_metadata(set, frame_metadata_of(options.frame));
  for (size_t i = first_new_note; i < set.notes.size(); ++i) print_notice(global, set.notes[i]);
  std::vector<std::string> warnings;
  if (auto warning = gm_change_warning(gm_before, set.gm)) warnings.push_back(*warning);
  if (to_radius)
    if (auto warning = reference_radius_warning(set.reference_radius, set.brillouin_radius))
      warnings.push_back(*warning);
  record_warnings(set, warnings);

  write_set_and_covariance(set, options.files, covariance, covariance_path, options.covariance_files, global);
  if (global.quiet) return;
  const SetOutputOptions& files = options.files;
  std::FILE* out = files.output == "-" || files.json == "-" ? stderr : stdout;
  fmt::print(out, "polystokes convert: {} ({}, degree {})\n", options.input, set.body, set.degree);
  for (size_t i = first_new_history + 1; i < set.history.size(); ++i)
    fmt::print(out, "  {}\n", set.history[i]);
  if (set.history.size() == first_new_history + 2)
    fmt::print(out, "  no change requested: set rewritten as is\n");
  fmt::print(out, "  convention         {}\n", describe(set.convention));
  fmt::print(out, "  reference radius   {:.9g} m, GM {:.9g} m^3 s^-2\n", set.reference_radius, set.gm);
  const Eigen::Vector3d& o = set.origin_in_mesh;
  const bool origin_unknown = set.origin == OriginKind::unknown,
             axes_unknown = set.frame == FrameKind::unknown;
  fmt::print(
      out, "  origin             {}{}, axes {}{}\n", to_string(set.origin),
      set.origin_known ? fmt::format(" ({:.9g}, {:.9g}, {:.9g}) m in the mesh frame", o.x(), o.y(), o.z())
      : origin_unknown ? std::string()
                       : std::string(" (place in the mesh frame unknown)"),
      frame_label(set), set.axes_known || axes_unknown ? "" : " (directions in the mesh frame unknown)");
  if (!set.frame_metadata.empty()) fmt::print(out, "  frame metadata     {}\n", describe(set.frame_metadata));
  fmt::print(out, "  written            {}{}\n", files.output,
             files.json.empty() ? "" : " and " + files.json);
  if (covariance && !covariance_path.empty())
    fmt::print(out,
               "  covariance         {}: {}, transformed with the set (C' = T C T^T); sigmas from its "
               "diagonal\n",
               covariance_path, describe_covariance_size(covariance->degree, covariance->samples));
}

}  // namespace

void setup_convert(CLI::App& app, const GlobalOptions& global) {
  auto options = std::make_shared<ConvertOptions>();
  auto* cmd = app.add_subcommand(
      "convert",
      "The same gravity field under other conventions, reference radius, GM, origin or axes.\n"
      "Steps run in this order: --max-degree, --shift, rotation, --to-ref-radius, --to-gm, conventions; "
      "each\n"
      "is exact and recorded in the output's history. IN is a polystokes set (text or JSON) or, with the\n"
      "table options, a plain table of another tool. Bare lengths on the command line are in --unit; a bare\n"
      "GM is in m^3 s^-2 in every command (or give a unit: 5.08e-7km3/s2); angles are in degrees\n"
      "(docs/units.md).\n"
      "Examples:\n"
      "  polystokes convert varnek.txt -o varnek_schmidt.txt --to-normalization schmidt --to-condon-shortley "
      "on\n"
      "  polystokes convert varnek.txt -o varnek_p.txt --to-principal --to-ref-radius 2.5 --unit km\n"
      "  polystokes convert team.tab --columns n,m,C,S,sigma_C,sigma_S --normalization unnormalized\n"
      "      --no-condon-shortley --zonal-j --ref-radius 2 --gm 1.1e-4km3/s2 --unit km --skip-lines 3 -o "
      "team.txt");
  cmd->add_option("input", options->input, "Coefficient set or plain table (- for stdin)")->required();
  add_set_output_options(cmd, options->files);
  add_covariance_file_options(cmd, options->covariance_files);
  cmd->add_flag("--no-covariance", options->no_covariance,
                "Drop the input's covariance companion (sigmas then propagated as if uncorrelated)");
  cmd->add_option("--unit", options->unit,
                  "Unit of bare lengths given here: m or km (GM is m^3 s^-2 unless it carries a unit)")
      ->check(CLI::IsMember({"m", "km"}))
      ->capture_default_str();
  cmd->add_option("--body", options->body, "New body label");
  auto* group = cmd->add_option_group("target", "What to convert to (unchanged when not given)");
  group->add_option("--to-normalization", options->to_normalization, normalization_choices(true))
      ->check(CLI::IsMember(normalization_words()));
  group->add_option("--to-condon-shortley", options->to_condon_shortley, "Condon-Shortley phase: on or off")
      ->check(CLI::IsMember({"on", "off"}));
  group->add_option("--to-zonal", options->to_zonal, "Zonal terms as c (C_n0) or j (J_n = -C_n0)")
      ->check(CLI::IsMember({"c", "j"}));
  group->add_option("--max-degree", options->max_degree, "Cut the set at this degree (0 to the set's degree)")
      ->check(strict_integer())
      ->check(CLI::NonNegativeNumber);
  add_quantity_option(group, "--to-ref-radius", options->to_ref_radius, QuantityKind::length,
                      "New reference radius");
  add_quantity_option(group, "--to-gm", options->to_gm, QuantityKind::gm, "New GM");
  auto* shift =
      group->add_option("--shift", options->shift,
                        "Move the expansion origin by dx,dy,dz (--unit, the set's axes), or 'com' to the "
                        "centre of mass implied by the degree-1 terms");
  group
      ->add_flag("--allow-outside", options->allow_outside,
                 "Allow a shift longer than the Brillouin radius (a caution is written into the notes)")
      ->needs(shift);
  auto* matrix =
      group->add_option("--rotate-matrix", options->rotate_matrix,
                        "Rotate the axes: 9 numbers row by row of Q, new coordinates = Q old coordinates");
  auto* euler = group->add_option("--rotate-euler", options->rotate_euler,
                                  "Rotate by Q = Rz(a) Ry(b) Rz(c): a,b,c in degrees (z-y-z, active)");
  auto* principal = group->add_flag("--to-principal", options->to_principal,
                                    "Rotate to the principal axes implied by the degree-2 terms");
  matrix->excludes(euler)->excludes(principal);
  euler->excludes(principal);
  add_frame_metadata_options(cmd, options->frame);
  auto* table = cmd->add_option_group(
      "table input", "Declarations for a plain table (all that change the numbers are required)");
  add_table_convention_options(table, options->table);
  table->add_option("--comment", options->comment, "Comment prefix")->capture_default_str();
  table->add_option("--skip-lines", options->skip_lines, "Header lines to skip")
      ->check(CLI::NonNegativeNumber);
  table->add_option("--table-origin", options->table_origin,
                    "The table's expansion origin: com (the centre of mass) or x,y,z in the mesh frame "
                    "(--unit); not given: recorded as unknown");
  table->add_option("--table-axes", options->table_axes,
                    "The table's axes: mesh (the shape model's own axes) or any label, e.g. principal "
                    "(directions then unknown); not given: recorded as unknown");
  cmd->callback([options, &global]() { run_convert(*options, global); });
}

}  // namespace polystokes::cli
