#include "polystokes/io/table_export.h"

#include <fmt/format.h>

#include <algorithm>
#include <cctype>
#include <iterator>
#include <string_view>
#include <vector>

#include "polystokes/core/constants.h"
#include "polystokes/core/errors.h"
#include "polystokes/io/output_file.h"
#include "polystokes/sets/conventions.h"
#include "polystokes/sets/transforms.h"

namespace polystokes {

namespace {

void check_export(const CoefficientSet& set, const TableExportOptions& options) {
  check_table_conventions(options);
  if (std::count(options.columns.begin(), options.columns.end(), TableColumn::skip))
    throw ConventionError(
        fmt::format("--columns '{}': an exported table has no skip column", to_string(options.columns)));
  if (options.max_degree < -1 || options.max_degree > set.degree)
    throw ConventionError(fmt::format("--max-degree {}: the set has degree {} (give 0 to {})",
                                      options.max_degree, set.degree, set.degree));
  if (options.separator != ' ' && options.separator != ',')
    throw ConventionError("--separator: a table's separator is a blank or a comma");
  if (options.digits < 0 || options.digits > 17)
    throw ConventionError(
        fmt::format("--digits {}: give 1 to 17 significant digits, or 0 for round trip", options.digits));
}

// A word the shell passes unchanged: bare when it holds only safe characters, else single-quoted.
std::string shell_word(const std::string& text) {
  const bool safe = !text.empty() && std::all_of(text.begin(), text.end(), [](char c) {
    return std::isalnum(static_cast<unsigned char>(c)) ||
           std::string_view("_.,:+-/@").find(c) != std::string_view::npos;
  });
  if (safe) return text;
  std::string out = "'";
  for (char c : text) out += c == '\'' ? std::string("'\\''") : std::string(1, c);
  return out + "'";
}

// The shortest decimal that reads back to the same double ([charconv.to.chars]): header values and the
// read-back command, exact and readable.
std::string round_trip(double value) { return fmt::format("{}", value); }

// The origin and axes as the header states them, each with the --table-origin / --table-axes declaration
// that records them on import ("" when import can only leave them unknown).
struct Declarations {
  std::string origin_words, origin_option, axes_words, axes_option;
};

Declarations origin_and_axes(const CoefficientSet& set) {
  Declarations out;
  if (set.origin_known) {
    const Eigen::Vector3d& p = set.origin_in_mesh;
    out.origin_option = fmt::format("{}m,{}m,{}m", round_trip(p.x()), round_trip(p.y()), round_trip(p.z()));
    out.origin_words =
        fmt::format("{} ({}), at ({}, {}, {}) m in the mesh frame", to_string(set.origin),
                    describe(set.origin), round_trip(p.x()), round_trip(p.y()), round_trip(p.z()));
  } else if (set.origin == OriginKind::center_of_mass) {
    out.origin_option = to_string(OriginKind::center_of_mass);
    out.origin_words = "the centre of mass, its place in the mesh frame not known";
  } else {
    out.origin_words = fmt::format("{} ({}), its place in the mesh frame not known", to_string(set.origin),
                                   describe(set.origin));
  }
  const bool mesh_axes = set.axes_known && set.axes_in_mesh == Eigen::Matrix3d::Identity();
  if (set.frame != FrameKind::unknown)
    out.axes_option = mesh_axes ? to_string(FrameKind::mesh) : frame_label(set);
  if (mesh_axes) {
    out.axes_words = "those of the mesh frame";
  } else if (set.axes_known) {
    const Eigen::Matrix3d& a = set.axes_in_mesh;
    out.axes_words = fmt::format(
        "{}, in the mesh frame x = ({}, {}, {}), y = ({}, {}, {}), z = ({}, {}, {}) (import records the "
        "label, "
        "not the directions)",
        frame_label(set), round_trip(a(0, 0)), round_trip(a(0, 1)), round_trip(a(0, 2)), round_trip(a(1, 0)),
        round_trip(a(1, 1)), round_trip(a(1, 2)), round_trip(a(2, 0)), round_trip(a(2, 1)),
        round_trip(a(2, 2)));
  } else {
    out.axes_words = set.frame == FrameKind::unknown
                         ? std::string("unknown")
                         : fmt::format("{}, directions in the mesh frame not known", frame_label(set));
  }
  return out;
}

// The `polystokes convert` command that reads the table back with the same declarations. Lengths carry
// "m" so that no unit conversion rounds them.
std::string import_command(const CoefficientSet& table_set, const TableExportOptions& options,
                           const Declarations& declared) {
  std::string command = fmt::format(
      "polystokes convert TABLE -o SET --columns {} --normalization {} --{}condon-shortley{} --ref-radius "
      "{}m "
      "--gm {} --unit {}",
      to_string(options.columns), to_string(*options.normalization), *options.condon_shortley ? "" : "no-",
      options.zonal_as_j ? " --zonal-j" : "", round_trip(*options.reference_radius), round_trip(*options.gm),
      to_string(options.unit));
  if (!declared.origin_option.empty()) command += " --table-origin " + declared.origin_option;
  if (!declared.axes_option.empty()) command += " --table-axes " + shell_word(declared.axes_option);
  const FrameMetadata& frame = table_set.frame_metadata;
  // A declared frame's name travels as its --table-axes label.
  if (frame.name && table_set.frame != FrameKind::declared)
    command += " --frame-name " + shell_word(*frame.name);
  if (frame.definition) command += " --frame-definition " + shell_word(*frame.definition);
  if (frame.pole_ra && frame.pole_dec)
    command += fmt::format(" --frame-pole {},{}", round_trip(*frame.pole_ra), round_trip(*frame.pole_dec));
  if (frame.meridian) command += " --frame-meridian " + round_trip(*frame.meridian);
  if (frame.epoch) command += " --frame-epoch " + shell_word(*frame.epoch);
  return command;
}

std::string value_text(double value, int digits) {
  return digits == 0 ? fmt::format("{:.17g}", value) : fmt::format("{:.{}e}", value, digits - 1);
}

}  // namespace

CoefficientSet set_for_table(const CoefficientSet& set, const TableExportOptions& options) {
  check_export(set, options);
  CoefficientSet out = set;
  if (options.max_degree >= 0 && options.max_degree < set.degree)
    out = truncate_degree(out, options.max_degree);
  if (*options.reference_radius != out.reference_radius)
    out = rescale_reference_radius(out, *options.reference_radius);
  if (*options.gm != out.gm) out = rescale_gm(out, *options.gm);
  const Convention target = declared_convention(options);
  if (target != out.convention) out = convert_convention(out, target);
  return out;
}

std::string format_table(const CoefficientSet& set, const TableExportOptions& options) {
  const CoefficientSet table = set_for_table(set, options);
  const Declarations declared = origin_and_axes(table);
  const double per_unit = meters_per(options.unit);
  fmt::memory_buffer out;
  const auto put = [&](auto&&... args) {
    fmt::format_to(std::back_inserter(out), std::forward<decltype(args)>(args)...);
  };
  put("# Stokes coefficients of {}, degrees 0 to {}, every order m = 0..n, one row each; written by "
      "polystokes {}\n",
      table.body, table.degree, POLYSTOKES_VERSION);
  std::vector<std::string> words;
  for (TableColumn column : options.columns) words.push_back(to_string(column));
  put("# columns: {} (separated by {})\n", fmt::join(words, " "),
      options.separator == ',' ? "commas" : "blanks");
  put("# normalization of P_nm: {}; Condon-Shortley phase (-1)^m: {}\n", describe(*options.normalization),
      *options.condon_shortley ? "included" : "not included");
  put("# m = 0 column: {}\n",
      options.zonal_as_j ? "J_n = -C_n0 for n >= 1 (degree 0 holds C00 as +1)" : "C_n0");
  put("# GM = {} m^3 s^-2; reference radius R = {} m{}\n", round_trip(table.gm),
      round_trip(table.reference_radius),
      options.unit == LengthUnit::meter
          ? std::string()
          : fmt::format(" = {} {}", round_trip(table.reference_radius / per_unit), to_string(options.unit)));
  put("# U(r, lat, lon) = GM/r sum_n (R/r)^n sum_m P_nm(sin lat) (C_nm cos(m lon) + S_nm sin(m lon)), valid "
      "outside the Brillouin sphere{}\n",
      table.brillouin_radius > 0
          ? fmt::format(" (radius {} m about the origin)", round_trip(table.brillouin_radius))
          : std::string());
  put("# origin: {}\n", declared.origin_words);
  put("# axes: {}\n", declared.axes_words);
  if (!table.frame_metadata.empty()) put("# frame metadata: {}\n", describe(table.frame_metadata));
  put("# sigma: one-sigma uncertainty, 0 when not estimated\n");
  put("# read back with: {}\n", import_command(table, options, declared));
  put("# {}\n", operational_caution());
  const char separator = options.separator;
  for (int n = 0; n <= table.degree; ++n)
    for (int m = 0; m <= n; ++m)
      for (size_t k = 0; k < options.columns.size(); ++k) {
        if (k > 0) put("{}", separator);
        switch (options.columns[k]) {
          case TableColumn::n:
            put("{}", n);
            break;
          case TableColumn::m:
            put("{}", m);
            break;
          case TableColumn::C:
            put("{}", value_text(table.C(n, m), options.digits));
            break;
          case TableColumn::S:
            put("{}", value_text(table.S(n, m), options.digits));
            break;
          case TableColumn::sigma_C:
            put("{}", value_text(table.sigma_C(n, m), options.digits));
            break;
          case TableColumn::sigma_S:
            put("{}", value_text(table.sigma_S(n, m), options.digits));
            break;
          case TableColumn::skip:
            break;  // refused by check_export
        }
        if (k + 1 == options.columns.size()) put("\n");
      }
  return fmt::to_string(out);
}

void write_table(const std::string& path, const CoefficientSet& set, const TableExportOptions& options) {
  write_file_atomically(path, format_table(set, options));
}

}  // namespace polystokes
