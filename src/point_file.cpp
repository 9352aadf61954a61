#include "point_file.h"

#include <fmt/format.h>

#include <algorithm>
#include <cctype>
#include <charconv>
#include <cmath>
#include <string_view>

#include "errors.h"
#include "output_file.h"

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

// Empty string when `field` is a whole finite-or-not number, else why it is not.
std::string parse_number(std::string_view field, double& value) {
  if (field.empty()) return "is empty";
  if (field.front() == '+') field.remove_prefix(1);  // from_chars does not take a leading '+'
  const auto result = std::from_chars(field.data(), field.data() + field.size(), value);
  if (result.ec == std::errc::result_out_of_range) return "is out of the range of double";
  if (result.ec != std::errc() || result.ptr != field.data() + field.size()) return "is not a number";
  return {};
}

std::string lower(std::string_view text) {
  std::string out(text);
  std::transform(out.begin(), out.end(), out.begin(), [](unsigned char c) { return char(std::tolower(c)); });
  return out;
}

}  // namespace

Points parse_points(const std::string& text, const std::string& source_name) {
  std::vector<double> coordinates;
  size_t expected_fields = 0;  // 0 until the first header or data line
  long line_number = 0;
  size_t position = 0;
  while (position <= text.size()) {
    const size_t end = std::min(text.find('\n', position), text.size());
    std::string_view line(text.data() + position, end - position);
    position = end + 1;
    ++line_number;
    if (const size_t hash = line.find('#'); hash != std::string_view::npos) line = line.substr(0, hash);
    line = trim(line);
    if (line.empty()) continue;
    const auto fields = split_fields(line);
    double first = 0;
    if (expected_fields == 0 && !parse_number(fields.front(), first).empty()) {
      if (fields.size() < 3 || lower(fields[0]) != "x" || lower(fields[1]) != "y" || lower(fields[2]) != "z")
        throw format_error(
            source_name, line_number,
            fmt::format("expected a header starting with x,y,z or three numbers, got '{}'", line));
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
      if (!std::isfinite(value))
        throw format_error(source_name, line_number,
                           fmt::format("field {} ('{}') is not finite", k + 1, fields[size_t(k)]));
      coordinates.push_back(value);
    }
  }
  if (coordinates.empty()) throw FormatError(source_name + ": no points");
  Points points(Eigen::Index(coordinates.size() / 3), 3);
  for (Eigen::Index i = 0; i < points.rows(); ++i)
    for (int k = 0; k < 3; ++k) points(i, k) = coordinates[size_t(3 * i + k)];
  return points;
}

Points read_points(const std::string& path) { return parse_points(read_file(path), path); }

std::string field_table_header(bool with_gradient) {
  return with_gradient ? "x,y,z,U,ax,ay,az,Txx,Txy,Txz,Tyy,Tyz,Tzz" : "x,y,z,U,ax,ay,az";
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
