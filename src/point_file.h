// Evaluation points in and field values out: CSV point lists (x,y,z in metres) and CSV field tables
// (x,y,z,U,ax,ay,az and optionally the six gradient components), written atomically with round-trip numbers.
#pragma once

#include <string>
#include <vector>

#include "field_value.h"

namespace polystokes {

/// Parses a point list. One point per line: "x,y,z" (metres; spaces around fields allowed). '#' starts a
/// comment (whole line or rest of line); blank lines are skipped. An optional header line whose first three
/// names are x,y,z (any case) may come first; it may name further columns (so a field table reads back as
/// points), and then every row must have as many fields as the header; without a header rows have exactly
/// three fields. Numbers are read with correct rounding (std::from_chars) and must be finite.
/// Throws FormatError "source:line: problem" (wrong field count, unparsable or non-finite number, bad
/// header) or "source: no points" for a list without points. Linear in the text length.
Points parse_points(const std::string& text, const std::string& source_name);

/// Reads and parses a point file ("-" = standard input).
Points read_points(const std::string& path);

/// Header of a field table: "x,y,z,U,ax,ay,az" and with_gradient adds ",Txx,Txy,Txz,Tyy,Tyz,Tzz".
std::string field_table_header(bool with_gradient);

/// The table: header line, then one row per point with the shortest round-trip form of every number
/// (fmt "{}"). Units: m, m^2 s^-2, m s^-2, s^-2. Throws ConventionError if the sizes differ.
std::string format_field_table(const Points& points, const std::vector<FieldValue>& values,
                               bool with_gradient);

/// format_field_table written atomically (write_file_atomically; "-" = stdout). Throws OutputError.
void write_field_table(const std::string& path, const Points& points, const std::vector<FieldValue>& values,
                       bool with_gradient);

}  // namespace polystokes
