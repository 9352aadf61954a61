// Evaluation points in and field values out: CSV point lists (x,y,z in a declared or the command's unit) and
// CSV field tables whose header names every column with its SI unit, written atomically with round-trip
// numbers.
#pragma once

#include <string>
#include <vector>

#include "polystokes/core/field_value.h"
#include "polystokes/core/mesh.h"

namespace polystokes {

/// Points as read, in metres, with the unit their file was read in.
struct PointList {
  Points points;                        ///< #P x 3, metres
  LengthUnit unit = LengthUnit::meter;  ///< unit of the file's coordinates
  bool unit_declared = false;           ///< the header declared it (x_m,y_m,z_m or x_km,y_km,z_km)
};

/// Parses a point list. One point per line: "x,y,z" (spaces around fields allowed). '#' starts a comment
/// (whole line or rest of line); blank lines are skipped. An optional header line may come first: x,y,z (any
/// case; coordinates in `bare_unit`, the command's --unit) or x_m,y_m,z_m / x_km,y_km,z_km (the file declares
/// its unit, which then applies whatever --unit says); it may name further columns (so a field table reads
/// back as points), and then every row must have as many fields as the header; without a header rows have
/// exactly three fields in `bare_unit`. Numbers follow the strict number rule (parse_strict_number).
/// Throws FormatError "source:line: problem" (wrong field count, not a number, bad header, mixed units) or
/// "source: no points" for a list without points. Linear in the text length.
PointList parse_points(const std::string& text, const std::string& source_name,
                       LengthUnit bare_unit = LengthUnit::meter);

/// Reads and parses a point file ("-" = standard input).
PointList read_points(const std::string& path, LengthUnit bare_unit = LengthUnit::meter);

/// Header of a field table, every column named with its SI unit: "x_m,y_m,z_m,U_m2_s2,ax_m_s2,ay_m_s2,
/// az_m_s2" and with_gradient adds ",Txx_per_s2,Txy_per_s2,Txz_per_s2,Tyy_per_s2,Tyz_per_s2,Tzz_per_s2".
std::string field_table_header(bool with_gradient);

/// The table: header line, then one row per point (metres) with the shortest round-trip form of every number
/// (fmt "{}"). Units: m, m^2 s^-2, m s^-2, s^-2. Throws ConventionError if the sizes differ.
std::string format_field_table(const Points& points, const std::vector<FieldValue>& values,
                               bool with_gradient);

/// format_field_table written atomically (write_file_atomically; "-" = stdout). Throws OutputError.
void write_field_table(const std::string& path, const Points& points, const std::vector<FieldValue>& values,
                       bool with_gradient);

}  // namespace polystokes
