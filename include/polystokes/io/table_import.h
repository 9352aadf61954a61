// Reading plain coefficient tables made by other tools (whitespace or comma separated), where the user
// declares what the file does not say: column order, normalization, phase, J_n form, radius, GM, unit.
#pragma once

#include <Eigen/Core>
#include <optional>
#include <string>
#include <vector>

#include "polystokes/core/coefficient_set.h"
#include "polystokes/core/mesh.h"
#include "polystokes/io/table_conventions.h"

namespace polystokes {

/// What the user declares about a table: its conventions (TableConventions; columns must hold n, m and C,
/// each once; a missing declaration is an error naming the option of `polystokes convert` that supplies it)
/// and how to read it.
struct TableImportOptions : TableConventions {
  std::string comment = "#";  ///< --comment: text from this prefix to the line end is ignored
  int skip_lines = 0;         ///< --skip-lines: header lines ignored before any parsing
  std::string body;           ///< label; default: the file name
  /// --table-origin: what the expansion origin is: not declared (OriginKind::unknown; the set records its
  /// origin as unknown), the centre of mass (mesh-frame place unknown) or a declared point of the mesh frame
  /// (OriginKind::point). The other kinds are refused.
  OriginKind origin = OriginKind::unknown;
  Eigen::Vector3d origin_point = Eigen::Vector3d::Zero();  ///< for OriginKind::point: mesh frame, m
  /// --table-axes: "mesh" (the axes of the shape model's own coordinates, so known in the mesh frame) or any
  /// other label (e.g. "principal", a named body-fixed frame), recorded with its directions unknown. Empty:
  /// the axes are recorded as unknown.
  std::string axes;
};

/// Parses a table. A data line holds at least as many fields as declared columns (fields after the last
/// declared column are ignored), separated by whitespace and/or single commas; numbers may use a Fortran
/// D exponent. Blank and comment-only lines are ignored. Rows must cover every order of every degree from
/// the lowest degree given (0, 1 or 2) to the highest; an absent degree 0 means C00 = 1 and an absent
/// degree 1 means zero degree-1 terms (both recorded in the history). An absent S or sigma column means
/// zeros. In J form (zonal_as_j) the degree-0 row holds C00 as usual (+1); a -1 there (J_0 = -C00 written
/// out) is read as C00 = +1 with a history line. Origin and axes are recorded as declared (see
/// TableImportOptions), unknown when not declared. Throws ConventionError naming every missing declaration,
/// FormatError "source:line: problem" for non-numeric or non-finite fields, negative sigmas, n or m not
/// integers, m > n, a non-zero S for m = 0, repeated (n, m), and "source: no row for n = .., m = .." for
/// gaps. O(lines).
CoefficientSet parse_table(const std::string& text, const std::string& source_name,
                           const TableImportOptions& options);

/// parse_table of a whole file (read_file; "-" = stdin).
CoefficientSet read_table(const std::string& path, const TableImportOptions& options);

}  // namespace polystokes
