#include "polystokes/io/table_import.h"

#include <fmt/format.h>

#include <algorithm>
#include <cctype>
#include <charconv>
#include <cmath>
#include <filesystem>
#include <map>

#include "io/table_common.h"
#include "io/text_scanner.h"
#include "polystokes/core/errors.h"
#include "polystokes/core/quantity.h"
#include "polystokes/io/output_file.h"
#include "polystokes/sets/conventions.h"
#include "polystokes/sets/transforms.h"

namespace polystokes {

namespace {

using table_io::trim;

constexpr int max_table_degree = 20000;  // same bound as compute's memory guard

// Fields separated by whitespace and/or single commas; an empty field between commas is an error.
std::vector<std::string> split_fields(const std::string& line, const std::string& source, long number) {
  std::vector<std::string> fields;
  size_t start = 0;
  const bool has_comma = line.find(',') != std::string::npos;
  while (true) {
    const size_t comma = line.find(',', start);
    const std::string piece =
        line.substr(start, comma == std::string::npos ? std::string::npos : comma - start);
    const std::string trimmed = trim(piece);
    if (has_comma && trimmed.empty())
      throw format_error(source, number, "empty field (two commas in a row, or a comma at an end)");
    size_t pos = 0;
    while (pos < trimmed.size()) {
      while (pos < trimmed.size() && std::isspace(static_cast<unsigned char>(trimmed[pos]))) ++pos;
      size_t end = pos;
      while (end < trimmed.size() && !std::isspace(static_cast<unsigned char>(trimmed[end]))) ++end;
      if (end > pos) fields.push_back(trimmed.substr(pos, end - pos));
      pos = end;
    }
    if (comma == std::string::npos) break;
    start = comma + 1;
  }
  return fields;
}

double parse_real(std::string_view field, const char* what, const std::string& source, long number) {
  // Tables may carry Fortran double-precision exponents (1.0D+00); otherwise the strict number rule.
  std::string text(field);
  for (char& c : text)
    if (c == 'D' || c == 'd') c = 'e';
  double value = 0;
  switch (read_strict_number(text, value)) {
    case NumberStatus::ok:
      return value;
    case NumberStatus::malformed:
      break;
    case NumberStatus::not_finite:
    case NumberStatus::out_of_range:
      throw format_error(source, number, fmt::format("{} '{}' is not finite", what, field));
  }
  throw format_error(source, number, fmt::format("{} '{}' is not a number", what, field));
}

long parse_index(std::string_view field, const char* what, const std::string& source, long number) {
  long value = 0;
  if (!parse_integer_token(field, value))
    throw format_error(source, number, fmt::format("{} '{}' is not an integer", what, field));
  return value;
}

void check_declarations(const TableImportOptions& options) {
  check_table_conventions(options);
  if (options.skip_lines < 0) throw ConventionError("--skip-lines must be >= 0");
  if (options.origin != OriginKind::unknown && options.origin != OriginKind::center_of_mass &&
      options.origin != OriginKind::point)
    throw ConventionError("--table-origin: a table's origin is com or a point, not " +
                          to_string(options.origin));
  if (options.origin == OriginKind::point && !options.origin_point.allFinite())
    throw ConventionError("--table-origin: the point has a non-finite coordinate");
  // Validates the column list the same way as parse_table_columns does for text.
  parse_table_columns(to_string(options.columns));
}

// Origin and axes as declared; what is not declared is recorded as unknown, so that compare does not
// align what nobody stated.
void record_origin_and_axes(const TableImportOptions& options, const std::string& source_name,
                            CoefficientSet& set) {
  // Same reading of the degree-1 terms as shift_origin: a centre of mass within 1e-9 R of the origin.
  const Eigen::Vector3d com_offset = center_of_mass_offset(set);
  const bool at_com = com_offset.norm() <= 1e-9 * set.reference_radius;
  if (options.axes.empty())
    set.frame = FrameKind::unknown;
  else
    set_frame_label(set, options.axes);
  set.axes_known = set.frame == FrameKind::mesh;
  set.origin_known = options.origin == OriginKind::point;
  set.origin_in_mesh = set.origin_known ? options.origin_point : Eigen::Vector3d::Zero();
  switch (options.origin) {
    case OriginKind::unknown:
      set.origin = OriginKind::unknown;
      break;
    case OriginKind::center_of_mass:
      set.origin = OriginKind::center_of_mass;
      if (!at_com)
        set.notes.push_back(fmt::format(
            "CAUTION: {} was declared to be about the centre of mass, but its degree-1 terms put the centre "
            "of mass {:.6g} m from the origin.",
            source_name, com_offset.norm()));
      break;
    case OriginKind::point:
      set.origin = at_com ? OriginKind::center_of_mass : OriginKind::point;
      if (at_com) set.center_of_mass = set.origin_in_mesh;
      break;
    default:
      break;  // refused by check_declarations
  }
  set.history.push_back(fmt::format(
      "{}: origin {}, axes {}", source_name,
      options.origin == OriginKind::unknown ? std::string("unknown (not declared)")
      : options.origin == OriginKind::center_of_mass
          ? std::string("the centre of mass (declared)")
          : fmt::format("({}, {}, {}) m in the mesh frame (declared)", set.origin_in_mesh.x(),
                        set.origin_in_mesh.y(), set.origin_in_mesh.z()),
      options.axes.empty() ? std::string("unknown (not declared)")
      : set.axes_known     ? std::string("those of the mesh frame (declared)")
                       : fmt::format("'{}' (declared; directions in the mesh frame unknown)", options.axes)));
}

}  // namespace

CoefficientSet parse_table(const std::string& text, const std::string& source_name,
                           const TableImportOptions& options) {
  check_declarations(options);
  auto column_index = [&](TableColumn column) -> int {
    const auto it = std::find(options.columns.begin(), options.columns.end(), column);
    return it == options.columns.end() ? -1 : int(it - options.columns.begin());
  };
  const int i_n = column_index(TableColumn::n), i_m = column_index(TableColumn::m),
            i_c = column_index(TableColumn::C);
  const int i_s = column_index(TableColumn::S), i_sc = column_index(TableColumn::sigma_C),
            i_ss = column_index(TableColumn::sigma_S);

  struct Row {
    double c = 0, s = 0, sigma_c = 0, sigma_s = 0;
    long line = 0;
  };
  std::map<std::pair<long, long>, Row> rows;
  TextScanner in(text, source_name);
  while (in.next_line()) {
    const long line_number = in.line_number();
    if (line_number <= options.skip_lines) continue;
    std::string line(in.rest());
    if (!options.comment.empty()) {
      const size_t at = line.find(options.comment);
      if (at != std::string::npos) line.erase(at);
    }
    if (trim(line).empty()) continue;
    const std::vector<std::string> fields = split_fields(line, source_name, line_number);
    if (fields.size() < options.columns.size())
      throw format_error(source_name, line_number,
                         fmt::format("{} field(s), but --columns {} declares {}", fields.size(),
                                     to_string(options.columns), options.columns.size()));
    const long n = parse_index(fields[size_t(i_n)], "n", source_name, line_number);
    const long m = parse_index(fields[size_t(i_m)], "m", source_name, line_number);
    if (n < 0 || m < 0)
      throw format_error(source_name, line_number,
                         fmt::format("negative degree or order (n = {}, m = {})", n, m));
    if (m > n)
      throw format_error(source_name, line_number, fmt::format("order m = {} exceeds degree n = {}", m, n));
    if (n > max_table_degree)
      throw format_error(source_name, line_number,
                         fmt::format("degree {} exceeds the supported {}", n, max_table_degree));
    Row row;
    row.line = line_number;
    row.c = parse_real(fields[size_t(i_c)], "C", source_name, line_number);
    if (i_s >= 0) row.s = parse_real(fields[size_t(i_s)], "S", source_name, line_number);
    if (i_sc >= 0) row.sigma_c = parse_real(fields[size_t(i_sc)], "sigma_C", source_name, line_number);
    if (i_ss >= 0) row.sigma_s = parse_real(fields[size_t(i_ss)], "sigma_S", source_name, line_number);
    if (row.sigma_c < 0 || row.sigma_s < 0) throw format_error(source_name, line_number, "negative sigma");
    if (m == 0 && (row.s != 0 || row.sigma_s != 0))
      throw format_error(source_name, line_number,
                         fmt::format("S or sigma_S is not 0 for m = 0 (n = {})", n));
    const auto inserted = rows.emplace(std::make_pair(n, m), row);
    if (!inserted.second)
      throw format_error(
          source_name, line_number,
          fmt::format("row n = {}, m = {} repeats line {}", n, m, inserted.first->second.line));
  }
  if (rows.empty()) throw format_error(source_name, 0, "no coefficient rows");

  const int degree = int(rows.rbegin()->first.first);
  const int lowest = int(rows.begin()->first.first);
  if (lowest > 2)
    throw format_error(
        source_name, 0,
        fmt::format("no rows below degree {}: a table must start at degree 0, 1 or 2", lowest));
  for (int n = lowest; n <= degree; ++n)
    for (int m = 0; m <= n; ++m)
      if (!rows.count({n, m}))
        throw format_error(source_name, 0,
                           fmt::format("no row for n = {}, m = {} (rows must cover every order of "
                                       "degrees {}..{})",
                                       n, m, lowest, degree));

  CoefficientSet set = make_empty_set(degree);
  set.convention = declared_convention(options);
  for (const auto& [key, row] : rows) {
    set.C(key.first, key.second) = row.c;
    set.S(key.first, key.second) = row.s;
    set.sigma_C(key.first, key.second) = row.sigma_c;
    set.sigma_S(key.first, key.second) = row.sigma_s;
  }
  set.gm = *options.gm;
  set.reference_radius = *options.reference_radius;
  set.body = options.body.empty() ? std::filesystem::path(source_name).filename().string() : options.body;
  set.length_unit = options.unit;
  set.created = std::string("imported from a table by polystokes ") + POLYSTOKES_VERSION;
  set.history.push_back(fmt::format(
      "imported from table {} (columns {}, {}, reference radius {} m, GM {} m^3 s^-2)", source_name,
      to_string(options.columns), describe(set.convention), set.reference_radius, set.gm));
  if (lowest > 0) {
    set.C(0, 0) = 1.0;  // C00 = 1 in every normalization and zonal form
    set.history.push_back(fmt::format("{}: no degree-0 row, C00 = 1 (GM is the total)", source_name));
  }
  if (lowest > 1)
    set.history.push_back(fmt::format("{}: no degree-1 rows, degree-1 terms set to 0", source_name));
  if (options.zonal_as_j && set.C(0, 0) < 0) {
    // Tables in J form write degree 0 as +1 (common practice); a -1 is J_0 = -C00 carried to n = 0.
    set.C(0, 0) = -set.C(0, 0);
    set.history.push_back(fmt::format("{}: degree-0 row {} read as J_0 = -C00, so C00 = {}", source_name,
                                      -set.C(0, 0), set.C(0, 0)));
  }
  if (!(set.C(0, 0) > 0))
    throw format_error(source_name, rows.begin()->second.line,
                       fmt::format("C00 = {} is not positive", set.C(0, 0)));
  record_origin_and_axes(options, source_name, set);
  set.notes.push_back(fmt::format(
      "Imported from the table {}: the Brillouin radius, mass and regions are not known.", source_name));
  return set;
}

CoefficientSet read_table(const std::string& path, const TableImportOptions& options) {
  check_declarations(options);
  return parse_table(read_file(path), path, options);
}

}  // namespace polystokes
