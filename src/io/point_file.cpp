#include "polystokes/io/point_file.h"

#include <fmt/format.h>

#include <algorithm>
#include <cctype>
#include <string_view>

#include "io/text_scanner.h"
#include "polystokes/core/errors.h"
#include "polystokes/core/quantity.h"
#include "polystokes/io/output_file.h"

namespace polystokes {

namespace {

std::string_view trim(std::string_view text) {
  const auto is_space = [](char c) { return c == ' ' || c == '\t' || c == '\r' || c == '\v' || c == '\f'; };
  while (!text.empty() && is_space(text.front())) text.remove_prefix(1);
  while (!text.empty() && is_space(text.back())) text.remove_suffix(1);
  return text;
}

std::vector<std::string_view> split_fields(std::string_view line) {
  std::vector<std::string_view> fields;
  size_t start = 0;
  for (;;) {
    const size_t comma = line.find(',', start);
    fields.push_back(
        trim(line.substr(start, comma == std::string_view::npos ? std::string_view::npos : comma - start)));
    if (comma == std::string_view::npos) return fields;
    start = comma + 1;
  }
}

std::string lower(std::string_view text) {
  std::string out(text);
  std::transform(out.begin(), out.end(), out.begin(), [](unsigned char c) { return char(std::tolower(c)); });
  return out;
}

// Empty string when `field` is a number under the strict rule, else why it is not.
std::string parse_number(std::string_view field, double& value) {
  if (field.empty()) return "is empty";
  const std::optional<double> number = parse_strict_number(field);
  if (!number) return "is not a number";
  value = *number;
  return {};
}

// The coordinate unit a header declares: x,y,z (none: the bare unit), x_m,y_m,z_m or x_km,y_km,z_km.
// Throws FormatError on anything else.
std::optional<LengthUnit> header_unit(const std::vector<std::string_view>& fields, std::string_view line,
                                      const std::string& source, long line_number) {
  static const char* const axes[] = {"x", "y", "z"};
  std::optional<std::string> suffix;
  for (int k = 0; k < 3 && size_t(k) < fields.size(); ++k) {
    const std::string name = lower(fields[size_t(k)]);
    if (name.empty() || name[0] != axes[k][0] || (name.size() > 1 && name[1] != '_')) {
      suffix.reset();
      break;
    }
    const std::string unit = name.size() > 1 ? name.substr(2) : "";
    if (k > 0 && unit != *suffix)
      throw format_error(source, line_number,
                         fmt::format("header '{}' gives the coordinates different units", line));
    suffix = unit;
  }
  if (fields.size() < 3 || !suffix || (!suffix->empty() && *suffix != "m" && *suffix != "km"))
    throw format_error(
        source, line_number,
        fmt::format("expected a header starting with x,y,z (or x_m,y_m,z_m or x_km,y_km,z_km) or "
                    "three numbers, got '{}'",
                    line));
  if (suffix->empty()) return std::nullopt;
  return parse_length_unit(*suffix);
}

}  // namespace

PointList parse_points(const std::string& text, const std::string& source_name, LengthUnit bare_unit) {
  PointList list;
  list.unit = bare_unit;
  std::vector<double> coordinates;
  size_t expected_fields = 0;  // 0 until the first header or data line
  TextScanner in(text, source_name);
  while (in.next_line()) {
    const long line_number = in.line_number();
    in.cut_comment('#');
    const std::string_view line = trim(in.rest());
    if (line.empty()) continue;
    const auto fields = split_fields(line);
    double first = 0;
    if (expected_fields == 0 && !parse_number(fields.front(), first).empty()) {
      if (const auto declared = header_unit(fields, line, source_name, line_number)) {
        list.unit = *declared;
        list.unit_declared = true;
      }
      expected_fields = fields.size();
      continue;
    }
    if (expected_fields == 0) expected_fields = 3;
    if (fields.size() != expected_fields)
      throw format_error(
          source_name, line_number,
          fmt::format("expected {} comma-separated fields, got {}", expected_fields, fields.size()));
    for (int k = 0; k < 3; ++k) {
      double value = 0;
      if (const std::string problem = parse_number(fields[size_t(k)], value); !problem.empty())
        throw format_error(source_name, line_number,
                           fmt::format("field {} ('{}') {}", k + 1, fields[size_t(k)], problem));
      coordinates.push_back(value);
    }
  }
  if (coordinates.empty()) throw FormatError(source_name + ": no points");
  const double metres = meters_per(list.unit);
  list.points.resize(Eigen::Index(coordinates.size() / 3), 3);
  for (Eigen::Index i = 0; i < list.points.rows(); ++i)
    for (int k = 0; k < 3; ++k) list.points(i, k) = coordinates[size_t(3 * i + k)] * metres;
  return list;
}

PointList read_points(const std::string& path, LengthUnit bare_unit) {
  return parse_points(read_file(path), path, bare_unit);
}

std::string field_table_header(bool with_gradient) {
  const std::string values = "x_m,y_m,z_m,U_m2_s2,ax_m_s2,ay_m_s2,az_m_s2";
  return with_gradient ? values + ",Txx_per_s2,Txy_per_s2,Txz_per_s2,Tyy_per_s2,Tyz_per_s2,Tzz_per_s2"
                       : values;
}

std::string format_field_table(const Points& points, const std::vector<FieldValue>& values,
                               bool with_gradient) {
  if (size_t(points.rows()) != values.size())
    throw ConventionError(fmt::format("{} points but {} field values", points.rows(), values.size()));
  fmt::memory_buffer out;
  fmt::format_to(std::back_inserter(out), "{}\n", field_table_header(with_gradient));
  for (size_t i = 0; i < values.size(); ++i) {
    const FieldValue& v = values[i];
    const auto row = points.row(Eigen::Index(i));
    fmt::format_to(std::back_inserter(out), "{},{},{},{},{},{},{}", row(0), row(1), row(2), v.potential,
                   v.acceleration.x(), v.acceleration.y(), v.acceleration.z());
    if (with_gradient)
      fmt::format_to(std::back_inserter(out), ",{},{},{},{},{},{}", v.gradient(0, 0), v.gradient(0, 1),
                     v.gradient(0, 2), v.gradient(1, 1), v.gradient(1, 2), v.gradient(2, 2));
    out.push_back('\n');
  }
  return fmt::to_string(out);
}

void write_field_table(const std::string& path, const Points& points, const std::vector<FieldValue>& values,
                       bool with_gradient) {
  write_file_atomically(path, format_field_table(points, values, with_gradient));
}

}  // namespace polystokes
